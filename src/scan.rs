//! Where a run of cells ends: the one row scanner of the pass's per-row consumers (the
//! patch labeller, the model's M runs, the report's runs).
//!
//! Every cell of a global grid goes through these scans, so they check 32 cells at a time
//! with a branch-free test (which the compiler vectorises) and step cell by cell only in
//! the block where the run ends.

/// Cells per block.
const B: usize = 32;

/// The first index at or after `from` whose cell does not satisfy `keep` (`cells.len()`
/// when all do).
#[inline]
pub(crate) fn run_end(cells: &[u8], from: usize, keep: impl Fn(u8) -> bool) -> usize {
    let n = cells.len();
    let mut c = from;
    while c + B <= n && cells[c..c + B].iter().fold(true, |a, &v| a & keep(v)) {
        c += B;
    }
    while c < n && keep(cells[c]) {
        c += 1;
    }
    c
}

/// [`run_end`] over two rows read side by side (a class row and its M row).
#[inline]
pub(crate) fn run_end2(
    cells: &[u8],
    flags: &[bool],
    from: usize,
    keep: impl Fn(u8, bool) -> bool,
) -> usize {
    let n = cells.len().min(flags.len());
    let mut c = from;
    while c + B <= n
        && cells[c..c + B]
            .iter()
            .zip(&flags[c..c + B])
            .fold(true, |a, (&v, &f)| a & keep(v, f))
    {
        c += B;
    }
    while c < n && keep(cells[c], flags[c]) {
        c += 1;
    }
    c
}

#[cfg(test)]
mod tests {
    use super::*;

    // Against a plain cell-by-cell scan (no outside source: two ways of finding the same
    // index), from every start, on runs ending on and off the 32-cell blocks.
    #[test]
    fn run_ends_equal_a_plain_scan() {
        let mut s = 11u64;
        let mut cells = Vec::new();
        while cells.len() < 3_000 {
            s = s.wrapping_mul(6364136223846793005).wrapping_add(1);
            let len = 1 + (s >> 58) as usize; // 1..=64
            let v = [0u8, 1, 2, 255][(s >> 40) as usize & 3];
            cells.extend(std::iter::repeat_n(v, len));
        }
        let flags: Vec<bool> = (0..cells.len()).map(|i| (i / 45) % 3 != 0).collect();
        for from in 0..cells.len() {
            let v = cells[from];
            let plain = (from..cells.len())
                .find(|&i| cells[i] != v)
                .unwrap_or(cells.len());
            assert_eq!(run_end(&cells, from, |x| x == v), plain, "from {from}");
            let f = flags[from];
            let plain2 = (from..cells.len())
                .find(|&i| (cells[i] != 255 && flags[i]) != (v != 255 && f))
                .unwrap_or(cells.len());
            let want = v != 255 && f;
            assert_eq!(
                run_end2(&cells, &flags, from, |x, m| (x != 255 && m) == want),
                plain2,
                "from {from}"
            );
        }
    }
}
