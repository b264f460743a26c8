//! Hot loops compiled for 4-wide AVX2 vectors when the CPU has them.

/// Runs `f` compiled with AVX2 enabled when the CPU has it, else plainly.
/// Only plain IEEE additions, multiplications and divisions are vectorised
/// (Rust never fuses a multiply and an add by itself), so both paths give
/// the same bits. The work `f` calls must be `#[inline(always)]` to be
/// compiled into the wide copy.
#[inline(always)]
pub(crate) fn with_avx2<R>(f: impl FnOnce() -> R) -> R {
    #[cfg(target_arch = "x86_64")]
    if std::arch::is_x86_feature_detected!("avx2") {
        #[target_feature(enable = "avx2")]
        fn avx2_copy<R>(f: impl FnOnce() -> R) -> R {
            f()
        }
        // SAFETY: the CPU was just checked for AVX2.
        return unsafe { avx2_copy(f) };
    }
    f()
}
