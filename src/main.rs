//! The `areal` command: parses, calls the library, prints.

mod cli;

use std::process::ExitCode;

fn main() -> ExitCode {
    keep_freed_memory();
    cli::main()
}

/// The decoder allocates and frees a buffer the size of a tile for every tile it reads
/// (hundreds of thousands at global 30"); with glibc's defaults each free hands the pages of
/// a worker's heap back to the kernel and the next allocation faults them in again. Keep up
/// to 64 MB of freed memory per heap instead (process-wide allocator settings, so here in
/// the binary rather than the library).
fn keep_freed_memory() {
    #[cfg(all(target_os = "linux", target_env = "gnu"))]
    // SAFETY: mallopt only changes the allocator's thresholds; called before any thread.
    unsafe {
        libc::mallopt(libc::M_TRIM_THRESHOLD, 64 << 20);
        libc::mallopt(libc::M_MMAP_THRESHOLD, 32 << 20);
    }
}
