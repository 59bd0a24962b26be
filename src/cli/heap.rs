//! The command's heap, set up once at start (the library never does this: it is the process's choice).
//!
//! A command runs for milliseconds, and on a virtual machine each first touch of a 4 KiB page of fresh heap
//! costs a trap to the kernel and often one to the hypervisor: 2700 page faults were a fifth of a compare at
//! 10001 points (about 11 MB of heap), 400 a seventh of one at 1601 (docs/performance.md, "compare",
//! 2026-12-04 eighth round). On Linux with glibc the heap is therefore asked for in one stretch from a
//! 2 MiB boundary, with the kernel's advice to back it with transparent huge pages (`MADV_HUGEPAGE`; the
//! kernel's "madvise" setting, the common default, honours it), so that a 2 MiB page is one fault; and
//! allocations up to [`MMAP_THRESHOLD`] come from that heap instead of a mapping of their own (each of
//! which faults anew). Elsewhere, or where the kernel refuses the advice, nothing changes but speed.
//!
//! The cost is memory: a huge page counts whole once touched, and the stretch (at most [`HUGE_HEAP`]) is
//! not given back until the process ends. Measured: a compare at 1601 points peaks at 9.4 MB of resident
//! memory (9.2 MB before), `inspect` of a 1,000,000-point file of 43.5 MB at 51.5 MB (48.6 MB before;
//! docs/performance.md).

/// The huge-page stretch of heap: allocations beyond it come from ordinary pages, as before.
#[cfg(all(target_os = "linux", target_env = "gnu"))]
const HUGE_HEAP: usize = 16 << 20;

/// A transparent huge page on x86-64 and aarch64 (with 4 KiB base pages).
#[cfg(all(target_os = "linux", target_env = "gnu"))]
const HUGE_PAGE: usize = 2 << 20;

/// Allocations from this size up get a mapping of their own, as glibc's default does from 128 KiB (a
/// 1,000,000-point sweep's arrays, tens of MB, so that they are returned when freed): a 10001-point
/// comparison's largest buffers (512 KiB) stay in the heap.
#[cfg(all(target_os = "linux", target_env = "gnu"))]
const MMAP_THRESHOLD: usize = 4 << 20;

/// Set the heap up as the module says. Call first thing in `main`, before any thread starts.
#[cfg(all(target_os = "linux", target_env = "gnu"))]
pub fn prepare() {
    // SAFETY: mallopt, malloc, free, sbrk(0) and madvise are called before any other thread exists, on
    // memory this function allocated itself (the advice covers heap that no allocation has touched yet:
    // the spacer below fills the heap up to the stretch's start and is never used).
    unsafe {
        // Until the stretch is in place every allocation comes from the heap, which grows by the
        // stretch at once (address space only until touched) and is not trimmed back.
        libc::mallopt(libc::M_MMAP_THRESHOLD, (2 * HUGE_HEAP) as libc::c_int);
        libc::mallopt(libc::M_TOP_PAD, HUGE_HEAP as libc::c_int);
        libc::mallopt(libc::M_TRIM_THRESHOLD, (4 * HUGE_HEAP) as libc::c_int);
        let probe = std::hint::black_box(libc::malloc(64)) as usize;
        if probe != 0 {
            // The first 2 MiB boundary at least one huge page above the heap's top; a spacer block takes
            // the heap up to just under it (only its header is ever written) and is kept for good.
            let start = (probe + 2 * HUGE_PAGE) & !(HUGE_PAGE - 1);
            let spacer = std::hint::black_box(libc::malloc(start - probe - 4096));
            let end = libc::sbrk(0) as usize;
            if !spacer.is_null() && end > start + HUGE_PAGE {
                let len = (end - start) & !(HUGE_PAGE - 1);
                // Refused (transparent huge pages disabled): ordinary pages, as without this.
                let _ = libc::madvise(start as *mut libc::c_void, len, libc::MADV_HUGEPAGE);
            }
            libc::free(probe as *mut libc::c_void);
        }
        libc::mallopt(libc::M_MMAP_THRESHOLD, MMAP_THRESHOLD as libc::c_int);
    }
}

/// Elsewhere the platform's allocator is left as it is.
#[cfg(not(all(target_os = "linux", target_env = "gnu")))]
pub fn prepare() {}
