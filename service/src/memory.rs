//! The allocator's handling of large, short-lived buffers, and returning freed memory to the
//! operating system after a dataset load.
//!
//! Loading a large dataset parses its files and builds tables on several threads; the
//! transient allocations (the parsed documents, per-thread build buffers) are freed afterwards,
//! but glibc's allocator keeps freed memory inside its per-thread arenas, so the process's
//! resident size would stay at the load's peak for as long as the server runs. `malloc_trim`
//! asks glibc to give back every free page of every arena (glibc manual, "Memory Allocation
//! Tunables" / malloc_trim(3), from memory). Elsewhere this does nothing.

/// Gives free heap pages back to the operating system (glibc on Linux; a no-op elsewhere).
/// Costs a few milliseconds on a large heap: call after loads, not per request.
pub fn release_free_memory() {
    #[cfg(all(target_os = "linux", target_env = "gnu"))]
    // SAFETY: malloc_trim only walks glibc's own free lists; it takes no pointers from us and
    // is safe to call from any thread at any time.
    unsafe {
        libc::malloc_trim(0);
    }
}

/// Largest allocation served from the heap rather than by its own mmap (bytes).
pub const HEAP_ALLOCATION_MAX_BYTES: usize = 32 << 20;

/// Free memory at the top of a heap kept for reuse rather than given back at once (bytes).
pub const HEAP_KEEP_FREE_BYTES: usize = 64 << 20;

/// Lets the allocator reuse memory for answers of up to [`HEAP_ALLOCATION_MAX_BYTES`] instead of
/// mapping and unmapping fresh pages for each one (glibc on Linux; a no-op elsewhere).
///
/// glibc's defaults map every allocation above 128 KiB separately and give free heap tops back
/// above 128 KiB (mallopt(3), from memory), so a solve answer whose per-point line lists are
/// hundreds of KiB page-faults its memory in again on every call; measured on the 2-core
/// machine with 200 levels (19,900 lines per point): 700-830 us per point on one thread with
/// the defaults, 420 us with these settings. At most [`HEAP_KEEP_FREE_BYTES`] stays free per
/// arena between calls; [`release_free_memory`] still gives everything back after a load.
/// Call once at start-up, before other threads allocate.
pub fn tune_allocator() {
    #[cfg(all(target_os = "linux", target_env = "gnu"))]
    // SAFETY: mallopt only sets glibc's own tuning parameters; both values fit in a c_int.
    unsafe {
        libc::mallopt(libc::M_MMAP_THRESHOLD, HEAP_ALLOCATION_MAX_BYTES as libc::c_int);
        libc::mallopt(libc::M_TRIM_THRESHOLD, HEAP_KEEP_FREE_BYTES as libc::c_int);
    }
}
