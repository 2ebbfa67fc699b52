//! A global allocator that refuses any single allocation above [`MAX_ALLOCATION_BYTES`]: the
//! process then aborts ("memory allocation failed") and the runner saves the input that did it.

use std::alloc::{GlobalAlloc, Layout, System};
use std::io::Write;
use std::sync::atomic::{AtomicUsize, Ordering};

/// The largest single allocation a reader may make on any input: 1 GiB.
pub const MAX_ALLOCATION_BYTES: usize = 1 << 30;

/// Size of the largest allocation request seen, bytes.
static LARGEST: AtomicUsize = AtomicUsize::new(0);

/// The capped allocator (install with `#[global_allocator]`).
pub struct CappedAlloc;

/// The largest allocation request seen so far, bytes.
pub fn largest_request_bytes() -> usize {
    LARGEST.load(Ordering::Relaxed)
}

fn note(size: usize) -> bool {
    LARGEST.fetch_max(size, Ordering::Relaxed);
    if size > MAX_ALLOCATION_BYTES {
        // No allocation here: a fixed message on the unbuffered stderr.
        let _ =
            std::io::stderr().write_all(b"spinfall-fuzz: an allocation above 1 GiB was refused\n");
        return false;
    }
    true
}

// SAFETY: every method forwards to the system allocator with the caller's arguments, or
// returns null (allowed by `GlobalAlloc`) when the request is too large.
#[allow(
    unsafe_code,
    reason = "a global allocator is the only way to see every allocation's size; it only \
              forwards to the system allocator"
)]
unsafe impl GlobalAlloc for CappedAlloc {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        if !note(layout.size()) {
            return std::ptr::null_mut();
        }
        // SAFETY: same contract as the caller's.
        unsafe { System.alloc(layout) }
    }

    unsafe fn alloc_zeroed(&self, layout: Layout) -> *mut u8 {
        if !note(layout.size()) {
            return std::ptr::null_mut();
        }
        // SAFETY: same contract as the caller's.
        unsafe { System.alloc_zeroed(layout) }
    }

    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        // SAFETY: `ptr` was allocated by `System` with `layout` (see `alloc`).
        unsafe { System.dealloc(ptr, layout) }
    }

    unsafe fn realloc(&self, ptr: *mut u8, layout: Layout, new_size: usize) -> *mut u8 {
        if !note(new_size) {
            return std::ptr::null_mut();
        }
        // SAFETY: same contract as the caller's.
        unsafe { System.realloc(ptr, layout, new_size) }
    }
}
