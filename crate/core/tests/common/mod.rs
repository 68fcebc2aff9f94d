//! A counting global allocator for the allocation tests (common practice, no
//! source). Each test binary that uses it installs it with
//! `#[global_allocator] static GLOBAL: common::Counting = common::Counting;`.
//! Counts are per thread, so the test harness's own threads (output capture,
//! the slow-test timer) never count: only the measuring thread's
//! allocations do.

use std::alloc::{GlobalAlloc, Layout, System};
use std::cell::Cell;

/// The counting allocator: the system allocator plus a per-thread count.
pub struct Counting;

thread_local! {
    static ALLOCATIONS: Cell<usize> = const { Cell::new(0) };
}

/// Allocations made so far by the calling thread.
pub fn allocations_so_far() -> usize {
    ALLOCATIONS.with(Cell::get)
}

unsafe impl GlobalAlloc for Counting {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        // `try_with`: during thread teardown the slot may be gone already.
        let _ = ALLOCATIONS.try_with(|c| c.set(c.get() + 1));
        System.alloc(layout)
    }
    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        System.dealloc(ptr, layout)
    }
}
