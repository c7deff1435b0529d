//! Benchmark floor: the time GDAL needs merely to decode every pixel of a raster once,
//! with N threads (default 2), each with its own dataset handle, reading alternate strips
//! one block row high. Prints the seconds and a checksum (so nothing is optimised away).
//!
//! `cargo run --release --example decode_floor -- FILE [THREADS]`

use gdal::Dataset;
use std::time::Instant;

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let args: Vec<String> = std::env::args().collect();
    let path = args
        .get(1)
        .ok_or("usage: decode_floor FILE [THREADS]")?
        .clone();
    let threads: usize = args.get(2).map(|s| s.parse()).transpose()?.unwrap_or(2);
    let t0 = Instant::now();
    let (w, h, bh) = {
        let ds = Dataset::open(&path)?;
        let b = ds.rasterband(1)?;
        let (w, h) = b.size();
        (w, h, b.block_size().1)
    };
    let strips: Vec<usize> = (0..h).step_by(bh).collect();
    let sums: Vec<f64> = std::thread::scope(|s| {
        let handles: Vec<_> = (0..threads)
            .map(|t| {
                let path = path.clone();
                let strips = &strips;
                s.spawn(move || -> f64 {
                    let ds = Dataset::open(&path).unwrap();
                    let band = ds.rasterband(1).unwrap();
                    let mut buf = vec![0f32; w * bh];
                    let mut sum = 0f64;
                    for &y0 in strips.iter().skip(t).step_by(threads) {
                        let rows = bh.min(h - y0);
                        band.read_into_slice::<f32>(
                            (0, y0 as isize),
                            (w, rows),
                            (w, rows),
                            &mut buf[..w * rows],
                            None,
                        )
                        .unwrap();
                        sum += buf[..w * rows]
                            .iter()
                            .step_by(4099)
                            .map(|&v| v as f64)
                            .sum::<f64>();
                    }
                    sum
                })
            })
            .collect();
        handles.into_iter().map(|h| h.join().unwrap()).collect()
    });
    println!(
        "{{\"seconds\": {:.3}, \"threads\": {threads}, \"checksum\": {}}}",
        t0.elapsed().as_secs_f64(),
        sums.iter().sum::<f64>()
    );
    Ok(())
}
