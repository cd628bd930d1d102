//! Reusable scratch buffers for the kernels, kept per thread.
//!
//! Kernels run many times with the same sizes; freshly allocated buffers of
//! a few hundred KB come back from the allocator as new pages the kernel
//! must fault in and zero (the largest single cost in a profile of the conv
//! kernel). Buffers returned here are handed out again instead.

use std::cell::RefCell;

/// Buffers kept per thread at most; more are simply freed.
const KEPT_BUFFERS: usize = 8;

thread_local! {
    static FREE: RefCell<Vec<Vec<f32>>> = const { RefCell::new(Vec::new()) };
}

/// A buffer of exactly `len` values with arbitrary contents: the caller must
/// write every cell it reads. Give it back with [`recycle`].
pub(crate) fn take(len: usize) -> Vec<f32> {
    let mut buffer = FREE
        .try_with(|free| free.borrow_mut().pop())
        .ok()
        .flatten()
        .unwrap_or_default();
    buffer.resize(len, 0.0);
    buffer
}

/// Returns a buffer from [`take`] for reuse on this thread.
pub(crate) fn recycle(buffer: Vec<f32>) {
    let _ = FREE.try_with(|free| {
        let mut free = free.borrow_mut();
        if free.len() < KEPT_BUFFERS {
            free.push(buffer);
        }
    });
}
