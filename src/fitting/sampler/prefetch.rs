//! A cache prefetch hint for the samplers' random reads.
//!
//! The sampling kernels know a few tokens ahead which words, rows and
//! word-major entries they will read, and those reads miss the cache; asking
//! for the lines early lets the memory latency overlap useful work. A
//! prefetch is only a hint: it never faults, never changes memory and never
//! reads a value into the program, so a wrong address costs nothing but a
//! wasted load.

/// Asks the processor to bring `slice[index]` into the cache. Does nothing
/// when `index` is out of range or on targets without a prefetch instruction.
#[inline(always)]
pub fn prefetch<T>(slice: &[T], index: usize) {
    #[cfg(target_arch = "x86_64")]
    if let Some(item) = slice.get(index) {
        let address = std::ptr::from_ref(item).cast::<i8>();
        // SAFETY: `_mm_prefetch` needs SSE, which every x86_64 processor has
        // (it is part of the x86_64 baseline the compiler targets); the
        // instruction is a hint that does not dereference the address for
        // the program, and the address is that of a live element anyway.
        #[allow(unsafe_code)]
        unsafe {
            core::arch::x86_64::_mm_prefetch::<{ core::arch::x86_64::_MM_HINT_T0 }>(address);
        }
    }
    #[cfg(not(target_arch = "x86_64"))]
    let _ = (slice, index);
}
