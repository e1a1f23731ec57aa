// The analysis makes many small, short-lived allocations (one map per
// solved state); mimalloc handles that pattern markedly faster than the
// system allocator (measured on the 160k-part benchmark). It is built
// without transparent huge pages (`no_thp` in Cargo.toml): zeroing 2 MiB
// pages on first touch cost the 1.6M-part check 5.9-6.7 s of system time,
// against 2.3-3.5 s with ordinary pages (wall 15.6-16.4 s -> 14.1-14.8 s).
#[global_allocator]
static GLOBAL: mimalloc::MiMalloc = mimalloc::MiMalloc;

/// mimalloc's `purge_delay` option (its index in the v3 option enum,
/// which the bindings do not name; a test checks the index).
const MI_OPTION_PURGE_DELAY: libmimalloc_sys::mi_option_t = 15;

fn main() {
    // A check is a short-lived process: memory it frees is better kept
    // for its next allocation than handed back to the OS and faulted in
    // again. On the benchmark VM this cut the page faults of the 160k-part
    // check from 700-2,200 to about 400.
    // SAFETY: sets a process-wide allocator option; no memory is touched.
    unsafe { libmimalloc_sys::mi_option_set(MI_OPTION_PURGE_DELAY, -1) };
    restore_sigpipe();
    let code = armature::cli::run(std::env::args().collect());
    std::process::exit(code);
}

/// Output piped into `head` or a pager that quits: end quietly, as a
/// Unix tool does (status 141 in the shell), rather than panic on the
/// broken pipe. Rust starts programs with SIGPIPE ignored; this puts the
/// default action back.
#[cfg(unix)]
fn restore_sigpipe() {
    const SIGPIPE: i32 = 13;
    const SIG_DFL: usize = 0;
    unsafe extern "C" {
        fn signal(sig: i32, handler: usize) -> usize;
    }
    // SAFETY: `signal` from the C library, called before any thread starts,
    // with the default disposition; no Rust handler is installed.
    unsafe {
        signal(SIGPIPE, SIG_DFL);
    }
}

#[cfg(not(unix))]
fn restore_sigpipe() {}

#[cfg(test)]
mod tests {
    #[test]
    fn purge_delay_index_is_the_purge_delay_option() {
        // This mimalloc's default purge delay is 1000 ms; a different
        // option at this index would have another default.
        // SAFETY: reads an allocator option.
        let v = unsafe { libmimalloc_sys::mi_option_get(super::MI_OPTION_PURGE_DELAY) };
        assert!(
            v == 1000,
            "option {} reads {v}",
            super::MI_OPTION_PURGE_DELAY
        );
    }
}
