//! Wider vector registers for plain element-wise loops, chosen at run time: a loop run
//! through [`with_avx`] is compiled a second time for AVX (256-bit registers) and that build
//! runs when the CPU has AVX. The two builds do the same IEEE 754 operations on every
//! element, each rounded the same way (AVX adds no fused multiply-add, and nothing here
//! reassociates), so they give the same result to the bit; only loops without reductions
//! across elements belong here.

/// True when the CPU has AVX (the answer is cached by the standard library).
#[inline]
pub fn has_avx() -> bool {
    #[cfg(target_arch = "x86_64")]
    {
        std::arch::is_x86_feature_detected!("avx")
    }
    #[cfg(not(target_arch = "x86_64"))]
    {
        false
    }
}

/// Runs `f`, compiled for AVX when the CPU has it. `f` should be an element-wise loop
/// (see the module comment).
#[inline(always)]
pub fn with_avx<R>(f: impl FnOnce() -> R) -> R {
    #[cfg(target_arch = "x86_64")]
    if has_avx() {
        /// # Safety
        /// The CPU must have AVX.
        #[target_feature(enable = "avx")]
        unsafe fn run<R>(f: impl FnOnce() -> R) -> R {
            f()
        }
        // SAFETY: the CPU has AVX (checked just above).
        return unsafe { run(f) };
    }
    f()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Both builds of an element-wise loop agree to the bit (IEEE 754-2008 §4: every
    /// basic operation is correctly rounded, whatever the register width).
    #[test]
    fn avx_build_is_bit_identical() {
        let x: Vec<f32> = (0..1001)
            .map(|i| (i as f32 * 0.37).sin() * 1e3 + 1e-3)
            .collect();
        let y: Vec<f32> = (0..1001).map(|i| (i as f32 * 0.11).cos() + 2.0).collect();
        let kernel = |out: &mut [f32]| {
            for ((o, &a), &b) in out.iter_mut().zip(&x).zip(&y) {
                let n = (a * b / std::f32::consts::LN_2).max(f32::MIN_POSITIVE);
                *o = a / (1.0 + n) + b / n;
            }
        };
        let mut plain = vec![0.0f32; x.len()];
        kernel(&mut plain);
        let mut wide = vec![0.0f32; x.len()];
        with_avx(|| kernel(&mut wide));
        let bits = |v: &[f32]| v.iter().map(|f| f.to_bits()).collect::<Vec<_>>();
        assert_eq!(bits(&plain), bits(&wide));
    }
}
