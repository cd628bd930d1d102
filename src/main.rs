//! The `gemmule` binary: a thin shell over the library's command line.

use mimalloc::MiMalloc;

/// mimalloc instead of glibc malloc: the trainer's large per-step buffers made
/// glibc map and unmap pages every step (measured ~1.9x slower on wide MLPs).
#[global_allocator]
static GLOBAL: MiMalloc = MiMalloc;

fn main() {
    // candle looks up the thread count on every matmul unless this is set; each
    // candidate trains on one thread. Set before any other thread starts.
    if std::env::var_os("RAYON_NUM_THREADS").is_none() {
        std::env::set_var("RAYON_NUM_THREADS", "1");
    }
    // `gemmule show RUN | head` must end quietly when the reader goes away,
    // as command-line tools do, instead of failing on a closed pipe.
    #[cfg(unix)]
    // SAFETY: called first thing in main, before any thread exists; restores
    // the default disposition of SIGPIPE, which is always valid.
    unsafe {
        libc::signal(libc::SIGPIPE, libc::SIG_DFL);
    }
    std::process::exit(gemmule::cli::main());
}
