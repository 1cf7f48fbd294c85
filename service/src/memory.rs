//! Returning freed memory to the operating system after a dataset load.
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
