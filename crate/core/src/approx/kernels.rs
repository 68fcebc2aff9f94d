//! Dense kernels for the multi-layer perceptron: dot products, row updates
//! and a hyperbolic tangent over a slice.
//!
//! Everything here is written with basic IEEE-754 operations in a fixed
//! order (no fused multiply-add, no library calls), so native and
//! WebAssembly builds give the same bits, and the loops have independent
//! lanes so that the compiler can use vector instructions (SSE2 natively,
//! simd128 in WebAssembly) without changing the result.
//!
//! Numbers are `f64` throughout the core, deliberately: step sizes down to
//! 1e-6 on weights near 1 and the exact-solution checks (value iteration,
//! Riccati gains, shaping audits) need the 53-bit mantissa, and the cost of
//! `f64` over `f32` is at most a factor two on these small layers.

/// Number of interleaved partial sums in [`dot`] and [`matvec`].
const LANES: usize = 4;

/// Adds the lanes of a partial sum in a fixed order.
#[inline(always)]
fn reduce(acc: [f64; LANES]) -> f64 {
    (acc[0] + acc[1]) + (acc[2] + acc[3])
}

/// `Σ_i a_i b_i` over the shorter length, summed in [`LANES`] interleaved
/// partial sums that are then added pairwise, then the leftover entries in
/// order (a fixed order, so the result does not depend on the platform).
#[inline]
pub fn dot(a: &[f64], b: &[f64]) -> f64 {
    #[cfg(target_arch = "x86_64")]
    if avx::enabled() {
        // SAFETY: `enabled` is true only when the CPU has AVX.
        return unsafe { avx::dot(a, b) };
    }
    #[cfg(any(all(target_arch = "wasm32", target_feature = "simd128"), target_arch = "x86_64"))]
    return simd::dot(a, b);
    #[cfg(not(any(all(target_arch = "wasm32", target_feature = "simd128"), target_arch = "x86_64")))]
    dot_portable(a, b)
}

/// [`dot`] in portable code.
#[allow(dead_code)]
fn dot_portable(a: &[f64], b: &[f64]) -> f64 {
    let n = a.len().min(b.len());
    let (a, b) = (&a[..n], &b[..n]);
    let mut acc = [0.0f64; LANES];
    let (ca, cb) = (a.chunks_exact(LANES), b.chunks_exact(LANES));
    let (ra, rb) = (ca.remainder(), cb.remainder());
    for (x, y) in ca.zip(cb) {
        for k in 0..LANES {
            acc[k] += x[k] * y[k];
        }
    }
    let mut s = reduce(acc);
    for (x, y) in ra.iter().zip(rb) {
        s += x * y;
    }
    s
}

/// `out_r = bias_r + dot(m_r, x)` for the rows `m_r` (of length `x.len()`)
/// of the row-major matrix `m`: the same bits as [`dot`] row by row, with
/// four rows at a time sharing the loads of `x`.
pub fn matvec(m: &[f64], x: &[f64], bias: &[f64], out: &mut [f64]) {
    #[cfg(target_arch = "x86_64")]
    if avx::enabled() {
        // SAFETY: `enabled` is true only when the CPU has AVX.
        return unsafe { avx::matvec(m, x, bias, out) };
    }
    #[cfg(any(all(target_arch = "wasm32", target_feature = "simd128"), target_arch = "x86_64"))]
    simd::matvec(m, x, bias, out);
    #[cfg(not(any(all(target_arch = "wasm32", target_feature = "simd128"), target_arch = "x86_64")))]
    matvec_portable(m, x, bias, out);
}

/// [`matvec`] in portable code.
#[allow(dead_code)]
fn matvec_portable(m: &[f64], x: &[f64], bias: &[f64], out: &mut [f64]) {
    let n = x.len();
    let body = n - n % LANES;
    let rows = out.len();
    let mut r = 0;
    while r + 4 <= rows {
        let block = &m[r * n..(r + 4) * n];
        let (m0, rest) = block.split_at(n);
        let (m1, rest) = rest.split_at(n);
        let (m2, m3) = rest.split_at(n);
        let (mut a0, mut a1, mut a2, mut a3) =
            ([0.0f64; LANES], [0.0f64; LANES], [0.0f64; LANES], [0.0f64; LANES]);
        let lanes = |v: &[f64]| -> [f64; LANES] { v.try_into().expect("chunks have LANES entries") };
        for ((xv, (w0, w1)), (w2, w3)) in x[..body]
            .chunks_exact(LANES)
            .zip(m0[..body].chunks_exact(LANES).zip(m1[..body].chunks_exact(LANES)))
            .zip(m2[..body].chunks_exact(LANES).zip(m3[..body].chunks_exact(LANES)))
        {
            let (xv, w0, w1, w2, w3) = (lanes(xv), lanes(w0), lanes(w1), lanes(w2), lanes(w3));
            for k in 0..LANES {
                a0[k] += w0[k] * xv[k];
                a1[k] += w1[k] * xv[k];
                a2[k] += w2[k] * xv[k];
                a3[k] += w3[k] * xv[k];
            }
        }
        let acc = [a0, a1, a2, a3];
        for (q, mq) in [m0, m1, m2, m3].into_iter().enumerate() {
            let mut s = reduce(acc[q]);
            for i in body..n {
                s += mq[i] * x[i];
            }
            out[r + q] = bias[r + q] + s;
        }
        r += 4;
    }
    for q in r..rows {
        out[q] = bias[q] + dot_portable(&m[q * n..(q + 1) * n], x);
    }
}

/// Backpropagation through the rows of a layer with plain SGD: for each row
/// `r` of the row-major `m` (rows of length `input.len()`), in order, adds
/// `g_r · m_r` (the old weights) to `below`, then `c_r · input` to `m_r`.
/// Four rows at a time share the loads and stores of `below` and `input`;
/// each entry of `below` still receives its terms in row order, so the bits
/// equal those of one row at a time.
pub fn backprop_step(g: &[f64], c: &[f64], input: &[f64], m: &mut [f64], below: &mut [f64]) {
    #[cfg(target_arch = "x86_64")]
    if avx::enabled() {
        // SAFETY: `enabled` is true only when the CPU has AVX.
        return unsafe { avx::backprop_step(g, c, input, m, below) };
    }
    #[cfg(any(all(target_arch = "wasm32", target_feature = "simd128"), target_arch = "x86_64"))]
    simd::backprop_step(g, c, input, m, below);
    #[cfg(not(any(all(target_arch = "wasm32", target_feature = "simd128"), target_arch = "x86_64")))]
    backprop_step_portable(g, c, input, m, below);
}

/// [`backprop_step`] in portable code.
#[allow(dead_code)]
fn backprop_step_portable(g: &[f64], c: &[f64], input: &[f64], m: &mut [f64], below: &mut [f64]) {
    let n = input.len();
    let below = &mut below[..n];
    let rows = g.len();
    let mut r = 0;
    while r + 4 <= rows {
        let block = &mut m[r * n..(r + 4) * n];
        let (m0, rest) = block.split_at_mut(n);
        let (m1, rest) = rest.split_at_mut(n);
        let (m2, m3) = rest.split_at_mut(n);
        let (g0, g1, g2, g3) = (g[r], g[r + 1], g[r + 2], g[r + 3]);
        let (c0, c1, c2, c3) = (c[r], c[r + 1], c[r + 2], c[r + 3]);
        for i in 0..n {
            let x = input[i];
            let mut b = below[i];
            b += g0 * m0[i];
            m0[i] += c0 * x;
            b += g1 * m1[i];
            m1[i] += c1 * x;
            b += g2 * m2[i];
            m2[i] += c2 * x;
            b += g3 * m3[i];
            m3[i] += c3 * x;
            below[i] = b;
        }
        r += 4;
    }
    backprop_rows_from(r, g, c, input, m, below);
}

/// [`backprop_step`] one row at a time, for the rows from `first` on (the
/// rows left after the blocks of four).
fn backprop_rows_from(first: usize, g: &[f64], c: &[f64], input: &[f64], m: &mut [f64], below: &mut [f64]) {
    let n = input.len();
    for q in first..g.len() {
        let row = &mut m[q * n..(q + 1) * n];
        for i in 0..n {
            below[i] += g[q] * row[i];
            row[i] += c[q] * input[i];
        }
    }
}

/// `y ← y + c x` (elementwise, over the shorter length).
#[inline]
pub fn axpy(c: f64, x: &[f64], y: &mut [f64]) {
    for (yi, xi) in y.iter_mut().zip(x) {
        *yi += c * xi;
    }
}

/// Sum of squares.
#[inline]
pub fn norm_sq(x: &[f64]) -> f64 {
    dot(x, x)
}

/// Replaces every entry `v` of `x` by `tanh(v)` (see [`tanh`]).
#[inline]
pub fn tanh_in_place(x: &mut [f64]) {
    #[cfg(all(target_arch = "wasm32", target_feature = "simd128"))]
    return simd::tanh_in_place(x);
    #[cfg(target_arch = "x86_64")]
    if avx::enabled_avx2() {
        // SAFETY: `enabled_avx2` is true only when the CPU has AVX2.
        return unsafe { avx::tanh_in_place(x) };
    }
    #[allow(unreachable_code)]
    for v in x.iter_mut() {
        *v = tanh(*v);
    }
}

#[allow(clippy::excessive_precision)] // as printed in fdlibm
const LN2_HI: f64 = 6.931_471_803_691_238_164_90e-01;
#[allow(clippy::excessive_precision)] // as printed in fdlibm
const LN2_LO: f64 = 1.908_214_929_270_587_700_02e-10;
const ROUNDER: f64 = 6_755_399_441_055_744.0; // 1.5 · 2^52

// fdlibm's minimax coefficients for R(z) ≈ r·(e^r + 1)/(e^r − 1) = 2 + z·P(z),
// z = r², on |r| ≤ ln 2 / 2 (e_exp.c, Sun Microsystems 1993; error < 2^−59).
#[allow(clippy::excessive_precision)] // as printed in fdlibm
const P1: f64 = 1.666_666_666_666_660_190_37e-01;
#[allow(clippy::excessive_precision)] // as printed in fdlibm
const P2: f64 = -2.777_777_777_701_559_338_42e-03;
#[allow(clippy::excessive_precision)] // as printed in fdlibm
const P3: f64 = 6.613_756_321_437_934_361_17e-05;
#[allow(clippy::excessive_precision)] // as printed in fdlibm
const P4: f64 = -1.653_390_220_546_525_153_90e-06;
#[allow(clippy::excessive_precision)] // as printed in fdlibm
const P5: f64 = 4.138_136_797_057_238_460_39e-08;

/// The hyperbolic tangent from basic operations. With `y = 2|x|` reduced as
/// `y = k ln 2 + r`, `|r| ≤ ln 2 / 2` (Cody & Waite 1980, Chapter 6; the
/// split of ln 2 is fdlibm's), `e^r = (u + r)/(u − r)` with
/// `u = 2 + r² P(r²)` (fdlibm's rational form of exp), and `s = 2^k` exact,
/// `tanh|x| = (e^y − 1)/(e^y + 1) = ((s−1)u + (s+1)r) / ((s+1)u + (s−1)r)`:
/// one division, no cancellation near zero (the numerator is `2r` when
/// `k = 0`). Errors are a few units in the last place (checked against
/// `libm::tanh` in the tests); `|x| ≥ 20` gives ±1 as the true value rounds
/// there; NaN stays NaN. Branch-free, so a loop over a slice vectorises.
#[inline]
pub fn tanh(x: f64) -> f64 {
    let ax = x.abs();
    // Not `min`: a NaN must stay NaN so that a diverging network shows.
    let ax = if ax > 20.0 { 20.0 } else { ax };
    let y = 2.0 * ax;
    // k = round(y / ln 2) by the add-and-subtract trick (round to nearest even).
    let t = y * core::f64::consts::LOG2_E + ROUNDER;
    let k = t - ROUNDER;
    let r = (y - k * LN2_HI) - k * LN2_LO;
    let z = r * r;
    let u = 2.0 + z * (P1 + z * (P2 + z * (P3 + z * (P4 + z * P5))));
    // 2^k from the integer k held in the low mantissa bits of t (0 ≤ k ≤ 58).
    let ki = t.to_bits().wrapping_sub(ROUNDER.to_bits());
    let s = f64::from_bits(ki.wrapping_add(1023) << 52);
    let (sm, sp) = (s - 1.0, s + 1.0);
    let th = (sm * u + sp * r) / (sp * u + sm * r);
    f64::from_bits(th.to_bits() | (x.to_bits() & 0x8000_0000_0000_0000))
}

/// The same kernels written with explicit two-lane f64 vectors: WebAssembly's
/// simd128 (LLVM does not vectorise the portable loops for wasm32 by itself)
/// and, natively on x86-64, SSE2 through the [`sse2`] shim with the same
/// names (LLVM's own vectorisation of the portable loops shuffles lanes
/// around). Every lane does the portable code's operations in the portable
/// code's order, so the bits are the same everywhere: the tests compare both
/// natively, and tests/node compares the WebAssembly build with the native
/// one on MLP configs.
#[cfg(any(all(target_arch = "wasm32", target_feature = "simd128"), target_arch = "x86_64"))]
mod simd {
    #[cfg(target_arch = "x86_64")]
    use super::sse2::*;
    #[cfg(target_arch = "wasm32")]
    use core::arch::wasm32::*;

    #[inline(always)]
    fn pair(x: &[f64], i: usize) -> v128 {
        let p: &[f64; 2] = x[i..i + 2].try_into().expect("two entries");
        // SAFETY: `p` is 16 readable bytes; wasm loads have no alignment
        // requirement (the alignment in the instruction is only a hint).
        unsafe { v128_load(p.as_ptr().cast::<v128>()) }
    }

    #[inline(always)]
    fn store(v: v128, out: &mut [f64], i: usize) {
        let p: &mut [f64; 2] = (&mut out[i..i + 2]).try_into().expect("two entries");
        // SAFETY: `p` is 16 writable bytes borrowed exclusively; no alignment
        // requirement, as for the load.
        unsafe { v128_store(p.as_mut_ptr().cast::<v128>(), v) }
    }

    #[inline(always)]
    fn reduce(lo: v128, hi: v128) -> f64 {
        (f64x2_extract_lane::<0>(lo) + f64x2_extract_lane::<1>(lo))
            + (f64x2_extract_lane::<0>(hi) + f64x2_extract_lane::<1>(hi))
    }

    pub fn dot(a: &[f64], b: &[f64]) -> f64 {
        let n = a.len().min(b.len());
        let body = n - n % 4;
        let (mut lo, mut hi) = (f64x2_splat(0.0), f64x2_splat(0.0));
        let mut i = 0;
        while i < body {
            lo = f64x2_add(lo, f64x2_mul(pair(a, i), pair(b, i)));
            hi = f64x2_add(hi, f64x2_mul(pair(a, i + 2), pair(b, i + 2)));
            i += 4;
        }
        let mut s = reduce(lo, hi);
        for i in body..n {
            s += a[i] * b[i];
        }
        s
    }

    pub fn matvec(m: &[f64], x: &[f64], bias: &[f64], out: &mut [f64]) {
        let n = x.len();
        let body = n - n % 4;
        let rows = out.len();
        let mut r = 0;
        while r + 4 <= rows {
            let rows4 = [
                &m[r * n..(r + 1) * n],
                &m[(r + 1) * n..(r + 2) * n],
                &m[(r + 2) * n..(r + 3) * n],
                &m[(r + 3) * n..(r + 4) * n],
            ];
            let mut lo = [f64x2_splat(0.0); 4];
            let mut hi = [f64x2_splat(0.0); 4];
            for ((xv, (w0, w1)), (w2, w3)) in x[..body]
                .chunks_exact(4)
                .zip(rows4[0][..body].chunks_exact(4).zip(rows4[1][..body].chunks_exact(4)))
                .zip(rows4[2][..body].chunks_exact(4).zip(rows4[3][..body].chunks_exact(4)))
            {
                let (xl, xh) = (pair(xv, 0), pair(xv, 2));
                for (q, w) in [w0, w1, w2, w3].into_iter().enumerate() {
                    lo[q] = f64x2_add(lo[q], f64x2_mul(pair(w, 0), xl));
                    hi[q] = f64x2_add(hi[q], f64x2_mul(pair(w, 2), xh));
                }
            }
            for q in 0..4 {
                let mut s = reduce(lo[q], hi[q]);
                for i in body..n {
                    s += rows4[q][i] * x[i];
                }
                out[r + q] = bias[r + q] + s;
            }
            r += 4;
        }
        for q in r..rows {
            out[q] = bias[q] + dot(&m[q * n..(q + 1) * n], x);
        }
    }

    pub fn backprop_step(g: &[f64], c: &[f64], input: &[f64], m: &mut [f64], below: &mut [f64]) {
        let n = input.len();
        let body = n - n % 2;
        let rows = g.len();
        let mut r = 0;
        while r + 4 <= rows {
            let gs = [f64x2_splat(g[r]), f64x2_splat(g[r + 1]), f64x2_splat(g[r + 2]), f64x2_splat(g[r + 3])];
            let cs = [f64x2_splat(c[r]), f64x2_splat(c[r + 1]), f64x2_splat(c[r + 2]), f64x2_splat(c[r + 3])];
            let block = &mut m[r * n..(r + 4) * n];
            {
                let (m0, rest) = block.split_at_mut(n);
                let (m1, rest) = rest.split_at_mut(n);
                let (m2, m3) = rest.split_at_mut(n);
                let rows = (m0[..body].chunks_exact_mut(2).zip(m1[..body].chunks_exact_mut(2)))
                    .zip(m2[..body].chunks_exact_mut(2).zip(m3[..body].chunks_exact_mut(2)));
                for ((xv, bv), ((w0, w1), (w2, w3))) in
                    input[..body].chunks_exact(2).zip(below[..body].chunks_exact_mut(2)).zip(rows)
                {
                    let x = pair(xv, 0);
                    let mut b = pair(bv, 0);
                    for (q, w) in [w0, w1, w2, w3].into_iter().enumerate() {
                        let old = pair(w, 0);
                        b = f64x2_add(b, f64x2_mul(gs[q], old));
                        store(f64x2_add(old, f64x2_mul(cs[q], x)), w, 0);
                    }
                    store(b, bv, 0);
                }
            }
            for i in body..n {
                let x = input[i];
                let mut b = below[i];
                for q in 0..4 {
                    let w = &mut block[q * n + i];
                    b += g[r + q] * *w;
                    *w += c[r + q] * x;
                }
                below[i] = b;
            }
            r += 4;
        }
        super::backprop_rows_from(r, g, c, input, m, below);
    }

    #[cfg(target_arch = "wasm32")]
    pub fn tanh_in_place(x: &mut [f64]) {
        let body = x.len() - x.len() % 2;
        let mut i = 0;
        while i < body {
            let v = pair(x, i);
            store(tanh2(v), x, i);
            i += 2;
        }
        for v in &mut x[body..] {
            *v = super::tanh(*v);
        }
    }

    /// [`super::tanh`] on two lanes, operation for operation.
    #[cfg(target_arch = "wasm32")]
    #[inline(always)]
    fn tanh2(x: v128) -> v128 {
        let ax = f64x2_abs(x);
        let twenty = f64x2_splat(20.0);
        // ax > 20 ? 20 : ax (a NaN compares false and stays).
        let ax = v128_bitselect(twenty, ax, f64x2_gt(ax, twenty));
        let y = f64x2_mul(f64x2_splat(2.0), ax);
        let rounder = f64x2_splat(super::ROUNDER);
        let t = f64x2_add(f64x2_mul(y, f64x2_splat(core::f64::consts::LOG2_E)), rounder);
        let k = f64x2_sub(t, rounder);
        let r = f64x2_sub(
            f64x2_sub(y, f64x2_mul(k, f64x2_splat(super::LN2_HI))),
            f64x2_mul(k, f64x2_splat(super::LN2_LO)),
        );
        let z = f64x2_mul(r, r);
        let mut p = f64x2_splat(super::P5);
        for coef in [super::P4, super::P3, super::P2, super::P1] {
            p = f64x2_add(f64x2_splat(coef), f64x2_mul(z, p));
        }
        let u = f64x2_add(f64x2_splat(2.0), f64x2_mul(z, p));
        let ki = i64x2_sub(t, i64x2_splat(super::ROUNDER.to_bits() as i64));
        let s = i64x2_shl(i64x2_add(ki, i64x2_splat(1023)), 52);
        let one = f64x2_splat(1.0);
        let (sm, sp) = (f64x2_sub(s, one), f64x2_add(s, one));
        let num = f64x2_add(f64x2_mul(sm, u), f64x2_mul(sp, r));
        let den = f64x2_add(f64x2_mul(sp, u), f64x2_mul(sm, r));
        let th = f64x2_div(num, den);
        let sign = v128_and(x, i64x2_splat(i64::MIN));
        v128_or(th, sign)
    }
}

/// SSE2 under simd128's names, for [`simd`]. Every `unsafe` block below
/// calls an SSE2 intrinsic; SSE2 is part of the x86-64 baseline, so the
/// instructions exist on every machine this code can run on.
#[cfg(target_arch = "x86_64")]
mod sse2 {
    use core::arch::x86_64::*;

    #[allow(non_camel_case_types)]
    pub type v128 = __m128d;

    #[inline(always)]
    pub fn f64x2_add(a: v128, b: v128) -> v128 {
        // SAFETY: SSE2 is baseline on x86-64.
        unsafe { _mm_add_pd(a, b) }
    }

    #[inline(always)]
    pub fn f64x2_mul(a: v128, b: v128) -> v128 {
        // SAFETY: SSE2 is baseline on x86-64.
        unsafe { _mm_mul_pd(a, b) }
    }

    #[inline(always)]
    pub fn f64x2_splat(a: f64) -> v128 {
        // SAFETY: SSE2 is baseline on x86-64.
        unsafe { _mm_set1_pd(a) }
    }

    #[inline(always)]
    pub fn f64x2_extract_lane<const N: usize>(a: v128) -> f64 {
        // SAFETY: SSE2 is baseline on x86-64.
        unsafe {
            if N == 0 {
                _mm_cvtsd_f64(a)
            } else {
                _mm_cvtsd_f64(_mm_unpackhi_pd(a, a))
            }
        }
    }

    /// # Safety
    /// `p` must point to 16 readable bytes (no alignment needed).
    #[inline(always)]
    pub unsafe fn v128_load(p: *const v128) -> v128 {
        // SAFETY: the caller's promise; loadu has no alignment requirement.
        unsafe { _mm_loadu_pd(p.cast::<f64>()) }
    }

    /// # Safety
    /// `p` must point to 16 writable bytes (no alignment needed).
    #[inline(always)]
    pub unsafe fn v128_store(p: *mut v128, v: v128) {
        // SAFETY: the caller's promise; storeu has no alignment requirement.
        unsafe { _mm_storeu_pd(p.cast::<f64>(), v) }
    }
}

/// The kernels of [`simd`] on four-lane f64 vectors (AVX, 256 bits), chosen
/// at run time on x86-64 CPUs that have AVX. No fused multiply-add: each lane
/// rounds the product and then the sum, as the two-lane code does. The four
/// partial sums of [`dot`] and [`matvec`] are one vector here where they are
/// two (`lo`, `hi`) there, added in the same order, and [`backprop_step`]
/// works element by element, so the bits equal the two-lane and portable
/// kernels' (tested below; tests/node compares native and WebAssembly runs).
/// `CRITBOX_SIMD=sse2` in the environment keeps the two-lane kernels (to
/// measure what the wide ones bring).
#[cfg(target_arch = "x86_64")]
mod avx {
    use core::arch::x86_64::*;
    use std::sync::atomic::{AtomicU8, Ordering};

    /// 0: not yet decided, else as [`decide`] stores it.
    static MODE: AtomicU8 = AtomicU8::new(0);

    /// Whether the four-lane kernels are in use (decided once per process).
    #[inline(always)]
    pub fn enabled() -> bool {
        match MODE.load(Ordering::Relaxed) {
            0 => decide(),
            m => m >= 2,
        }
    }

    /// Whether the four-lane tanh is in use: it needs AVX2's 256-bit
    /// integer operations for the power of two.
    #[inline(always)]
    pub fn enabled_avx2() -> bool {
        match MODE.load(Ordering::Relaxed) {
            0 => {
                decide();
                MODE.load(Ordering::Relaxed) == 3
            }
            m => m == 3,
        }
    }

    /// 1: two lanes, 2: AVX, 3: AVX and AVX2.
    #[cold]
    fn decide() -> bool {
        let narrow = std::env::var("CRITBOX_SIMD").is_ok_and(|v| v.eq_ignore_ascii_case("sse2"));
        let wide = !narrow && std::is_x86_feature_detected!("avx");
        let wider = wide && std::is_x86_feature_detected!("avx2");
        MODE.store(
            if wider {
                3
            } else if wide {
                2
            } else {
                1
            },
            Ordering::Relaxed,
        );
        wide
    }

    /// Four entries from `i` on.
    #[inline(always)]
    unsafe fn quad(x: &[f64], i: usize) -> __m256d {
        let p: &[f64; 4] = x[i..i + 4].try_into().expect("four entries");
        // SAFETY: `p` is 32 readable bytes; loadu needs no alignment; AVX is
        // enabled in every caller.
        unsafe { _mm256_loadu_pd(p.as_ptr()) }
    }

    #[inline(always)]
    unsafe fn put(v: __m256d, out: &mut [f64], i: usize) {
        let p: &mut [f64; 4] = (&mut out[i..i + 4]).try_into().expect("four entries");
        // SAFETY: `p` is 32 writable bytes borrowed exclusively.
        unsafe { _mm256_storeu_pd(p.as_mut_ptr(), v) }
    }

    /// `(l0 + l1) + (l2 + l3)`, the portable `reduce`.
    #[inline(always)]
    unsafe fn reduce(v: __m256d) -> f64 {
        let mut l = [0.0f64; 4];
        // SAFETY: `l` is 32 writable bytes.
        unsafe { _mm256_storeu_pd(l.as_mut_ptr(), v) };
        (l[0] + l[1]) + (l[2] + l[3])
    }

    /// # Safety
    /// The CPU must have AVX ([`enabled`]).
    #[target_feature(enable = "avx")]
    pub unsafe fn dot(a: &[f64], b: &[f64]) -> f64 {
        let n = a.len().min(b.len());
        let body = n - n % 4;
        let mut acc = _mm256_setzero_pd();
        let mut i = 0;
        while i < body {
            // SAFETY: i + 4 <= n for both slices.
            acc = _mm256_add_pd(acc, _mm256_mul_pd(unsafe { quad(a, i) }, unsafe { quad(b, i) }));
            i += 4;
        }
        // SAFETY: AVX is enabled here.
        let mut s = unsafe { reduce(acc) };
        for i in body..n {
            s += a[i] * b[i];
        }
        s
    }

    /// Rows `r .. r + R` of [`super::matvec`], R independent sums sharing the
    /// loads of `x`.
    #[inline(always)]
    unsafe fn rows<const R: usize>(m: &[f64], x: &[f64], bias: &[f64], out: &mut [f64], r: usize) {
        let n = x.len();
        let body = n - n % 4;
        let block = &m[r * n..(r + R) * n];
        let mut acc = [_mm256_setzero_pd(); R];
        let mut i = 0;
        while i < body {
            // SAFETY: i + 4 <= n; every row of the block has n entries.
            let xv = unsafe { quad(x, i) };
            for (q, a) in acc.iter_mut().enumerate() {
                *a = _mm256_add_pd(*a, _mm256_mul_pd(unsafe { quad(block, q * n + i) }, xv));
            }
            i += 4;
        }
        for (q, a) in acc.into_iter().enumerate() {
            // SAFETY: AVX is enabled in the caller.
            let mut s = unsafe { reduce(a) };
            for i in body..n {
                s += block[q * n + i] * x[i];
            }
            out[r + q] = bias[r + q] + s;
        }
    }

    /// # Safety
    /// The CPU must have AVX ([`enabled`]).
    #[target_feature(enable = "avx")]
    pub unsafe fn matvec(m: &[f64], x: &[f64], bias: &[f64], out: &mut [f64]) {
        let n = x.len();
        let total = out.len();
        let mut r = 0;
        // Eight rows at a time keep eight sums in flight (the adds' latency).
        while r + 8 <= total {
            // SAFETY: AVX is enabled here.
            unsafe { rows::<8>(m, x, bias, out, r) };
            r += 8;
        }
        while r + 4 <= total {
            // SAFETY: AVX is enabled here.
            unsafe { rows::<4>(m, x, bias, out, r) };
            r += 4;
        }
        for q in r..total {
            // SAFETY: AVX is enabled here.
            out[q] = bias[q] + unsafe { dot(&m[q * n..(q + 1) * n], x) };
        }
    }

    /// # Safety
    /// The CPU must have AVX ([`enabled`]).
    #[target_feature(enable = "avx")]
    pub unsafe fn backprop_step(g: &[f64], c: &[f64], input: &[f64], m: &mut [f64], below: &mut [f64]) {
        let n = input.len();
        let below = &mut below[..n];
        let body = n - n % 4;
        let total = g.len();
        let mut r = 0;
        while r + 4 <= total {
            let gs = [g[r], g[r + 1], g[r + 2], g[r + 3]].map(|v| _mm256_set1_pd(v));
            let cs = [c[r], c[r + 1], c[r + 2], c[r + 3]].map(|v| _mm256_set1_pd(v));
            let block = &mut m[r * n..(r + 4) * n];
            let mut i = 0;
            while i < body {
                // SAFETY: i + 4 <= n; every row of the block has n entries.
                let x = unsafe { quad(input, i) };
                let mut b = unsafe { quad(below, i) };
                for q in 0..4 {
                    let old = unsafe { quad(block, q * n + i) };
                    b = _mm256_add_pd(b, _mm256_mul_pd(gs[q], old));
                    unsafe { put(_mm256_add_pd(old, _mm256_mul_pd(cs[q], x)), block, q * n + i) };
                }
                unsafe { put(b, below, i) };
                i += 4;
            }
            for i in body..n {
                let x = input[i];
                let mut b = below[i];
                for q in 0..4 {
                    let w = &mut block[q * n + i];
                    b += g[r + q] * *w;
                    *w += c[r + q] * x;
                }
                below[i] = b;
            }
            r += 4;
        }
        super::backprop_rows_from(r, g, c, input, m, below);
    }

    /// # Safety
    /// The CPU must have AVX2 ([`enabled_avx2`]).
    #[target_feature(enable = "avx2")]
    pub unsafe fn tanh_in_place(x: &mut [f64]) {
        let body = x.len() - x.len() % 4;
        let mut i = 0;
        while i < body {
            // SAFETY: i + 4 <= len; AVX2 is enabled here.
            unsafe { put(tanh4(quad(x, i)), x, i) };
            i += 4;
        }
        for v in &mut x[body..] {
            *v = super::tanh(*v);
        }
    }

    /// [`super::tanh`] on four lanes, operation for operation.
    #[target_feature(enable = "avx2")]
    fn tanh4(x: __m256d) -> __m256d {
        let sign_bit = _mm256_castsi256_pd(_mm256_set1_epi64x(i64::MIN));
        let ax = _mm256_andnot_pd(sign_bit, x);
        let twenty = _mm256_set1_pd(20.0);
        // ax > 20 ? 20 : ax (a NaN compares false and stays).
        let ax = _mm256_blendv_pd(ax, twenty, _mm256_cmp_pd::<_CMP_GT_OQ>(ax, twenty));
        let y = _mm256_mul_pd(_mm256_set1_pd(2.0), ax);
        let rounder = _mm256_set1_pd(super::ROUNDER);
        let t = _mm256_add_pd(_mm256_mul_pd(y, _mm256_set1_pd(core::f64::consts::LOG2_E)), rounder);
        let k = _mm256_sub_pd(t, rounder);
        let r = _mm256_sub_pd(
            _mm256_sub_pd(y, _mm256_mul_pd(k, _mm256_set1_pd(super::LN2_HI))),
            _mm256_mul_pd(k, _mm256_set1_pd(super::LN2_LO)),
        );
        let z = _mm256_mul_pd(r, r);
        let mut p = _mm256_set1_pd(super::P5);
        for coef in [super::P4, super::P3, super::P2, super::P1] {
            p = _mm256_add_pd(_mm256_set1_pd(coef), _mm256_mul_pd(z, p));
        }
        let u = _mm256_add_pd(_mm256_set1_pd(2.0), _mm256_mul_pd(z, p));
        let ki =
            _mm256_sub_epi64(_mm256_castpd_si256(t), _mm256_set1_epi64x(super::ROUNDER.to_bits() as i64));
        let s = _mm256_castsi256_pd(_mm256_slli_epi64::<52>(_mm256_add_epi64(ki, _mm256_set1_epi64x(1023))));
        let one = _mm256_set1_pd(1.0);
        let (sm, sp) = (_mm256_sub_pd(s, one), _mm256_add_pd(s, one));
        let num = _mm256_add_pd(_mm256_mul_pd(sm, u), _mm256_mul_pd(sp, r));
        let den = _mm256_add_pd(_mm256_mul_pd(sp, u), _mm256_mul_pd(sm, r));
        let th = _mm256_div_pd(num, den);
        _mm256_or_pd(th, _mm256_and_pd(x, sign_bit))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn tanh_agrees_with_libm() {
        // Reference: the libm crate's tanh (a port of musl/fdlibm), on a fine
        // grid, near zero, near the saturation point and at special values.
        let mut worst_abs: f64 = 0.0;
        let mut worst_rel: f64 = 0.0;
        let mut check = |x: f64| {
            let (got, want) = (tanh(x), libm::tanh(x));
            let abs = (got - want).abs();
            worst_abs = worst_abs.max(abs);
            if want != 0.0 {
                worst_rel = worst_rel.max(abs / want.abs());
            }
        };
        for i in -300_000..=300_000 {
            check(i as f64 * 1e-4);
        }
        for e in -300..2 {
            let x = 10f64.powi(e);
            check(x);
            check(-x);
        }
        for x in [19.0, 19.06, 19.1, 20.0, 20.5, 22.0, 700.0, 1e300, f64::MAX] {
            check(x);
            check(-x);
        }
        // Measured here: 4.4e-16 absolute, 2.75 ε relative (near x = 0.61).
        assert!(worst_abs <= 2.0 * f64::EPSILON, "largest absolute difference {worst_abs:e}");
        assert!(worst_rel <= 3.0 * f64::EPSILON, "largest relative difference: {worst_rel:e}");
        assert_eq!(tanh(f64::INFINITY), 1.0);
        assert_eq!(tanh(f64::NEG_INFINITY), -1.0);
        assert!(tanh(f64::NAN).is_nan());
        assert_eq!(tanh(0.0).to_bits(), 0.0f64.to_bits());
        assert_eq!(tanh(-0.0).to_bits(), (-0.0f64).to_bits());
        // Odd function, bit for bit.
        for i in 1..1000 {
            let x = i as f64 * 0.0137;
            assert_eq!(tanh(-x), -tanh(x));
        }
    }

    #[test]
    fn vector_kernels_give_the_portable_bits() {
        // Common practice, no source: the explicit-vector kernels (used on x86-64
        // and in WebAssembly) and the portable loops (every other target) give
        // the same bits, for lengths and row counts around the block sizes.
        for n in [1, 2, 3, 4, 5, 7, 8, 13, 64] {
            for rows in [1, 3, 4, 5, 8, 11] {
                let x: Vec<f64> = (0..n).map(|i| (i as f64 * 0.71).sin()).collect();
                let m0: Vec<f64> = (0..rows * n).map(|i| (i as f64 * 0.23).cos()).collect();
                let bias: Vec<f64> = (0..rows).map(|i| i as f64 * 0.3 - 1.0).collect();
                let (mut a, mut b) = (vec![0.0; rows], vec![0.0; rows]);
                matvec(&m0, &x, &bias, &mut a);
                matvec_portable(&m0, &x, &bias, &mut b);
                assert_eq!(a, b, "matvec n = {n}, rows = {rows}");
                assert_eq!(dot(&m0[..n], &x).to_bits(), dot_portable(&m0[..n], &x).to_bits());
                let g: Vec<f64> = (0..rows).map(|i| (i as f64 * 1.3).sin()).collect();
                let c: Vec<f64> = g.iter().map(|v| -0.02 * v).collect();
                let (mut ma, mut mb) = (m0.clone(), m0.clone());
                let (mut ba, mut bb) = (vec![0.25; n], vec![0.25; n]);
                backprop_step(&g, &c, &x, &mut ma, &mut ba);
                backprop_step_portable(&g, &c, &x, &mut mb, &mut bb);
                assert_eq!((ma, ba), (mb, bb), "backprop n = {n}, rows = {rows}");
            }
        }
    }

    #[cfg(target_arch = "x86_64")]
    #[test]
    fn four_lane_kernels_give_the_portable_bits() {
        // Common practice, no source: the AVX kernels (four f64 lanes, no
        // fused multiply-add) give the bits of the portable loops and of the
        // two-lane SSE2 kernels, for lengths and row counts around the block
        // sizes (4 entries, 4 and 8 rows), with values of mixed magnitude so
        // that a change of summation order would show.
        if !std::is_x86_feature_detected!("avx") {
            eprintln!("this CPU has no AVX: the four-lane kernels are not used here");
            return;
        }
        for n in [1, 2, 3, 4, 5, 6, 7, 8, 9, 13, 16, 63, 64, 65] {
            for rows in [1, 2, 3, 4, 5, 7, 8, 9, 12, 16, 17] {
                let x: Vec<f64> =
                    (0..n).map(|i| (i as f64 * 0.71).sin() * 10f64.powi(i as i32 % 7 - 3)).collect();
                let m0: Vec<f64> =
                    (0..rows * n).map(|i| (i as f64 * 0.23).cos() * 10f64.powi(i as i32 % 5 - 2)).collect();
                let bias: Vec<f64> = (0..rows).map(|i| i as f64 * 0.3 - 1.0).collect();
                let (mut wide, mut two, mut plain) = (vec![0.0; rows], vec![0.0; rows], vec![0.0; rows]);
                // SAFETY: AVX was detected above.
                unsafe { avx::matvec(&m0, &x, &bias, &mut wide) };
                simd::matvec(&m0, &x, &bias, &mut two);
                matvec_portable(&m0, &x, &bias, &mut plain);
                let bits = |v: &[f64]| v.iter().map(|a| a.to_bits()).collect::<Vec<_>>();
                assert_eq!(bits(&wide), bits(&plain), "matvec n = {n}, rows = {rows}");
                assert_eq!(bits(&two), bits(&plain), "matvec n = {n}, rows = {rows}");
                // SAFETY: AVX was detected above.
                let d = unsafe { avx::dot(&m0[..n], &x) };
                assert_eq!(d.to_bits(), dot_portable(&m0[..n], &x).to_bits(), "dot n = {n}");
                let g: Vec<f64> = (0..rows).map(|i| (i as f64 * 1.3).sin()).collect();
                let c: Vec<f64> = g.iter().map(|v| -0.02 * v).collect();
                let (mut ma, mut mb) = (m0.clone(), m0.clone());
                let (mut ba, mut bb) = (vec![0.25; n], vec![0.25; n]);
                // SAFETY: AVX was detected above.
                unsafe { avx::backprop_step(&g, &c, &x, &mut ma, &mut ba) };
                backprop_step_portable(&g, &c, &x, &mut mb, &mut bb);
                assert_eq!((bits(&ma), bits(&ba)), (bits(&mb), bits(&bb)), "backprop n = {n}, rows = {rows}");
            }
        }
        if std::is_x86_feature_detected!("avx2") {
            // The four-lane tanh gives the scalar tanh's bits, special values,
            // the clamp at 20 and signed zeros included, for every remainder.
            let mut xs: Vec<f64> = (-40_000..=40_000).map(|i| i as f64 * 6.1e-4).collect();
            xs.extend([
                0.0,
                -0.0,
                19.999,
                20.0,
                20.001,
                700.0,
                -700.0,
                f64::MAX,
                f64::MIN_POSITIVE,
                5e-324,
                -5e-324,
            ]);
            xs.extend([f64::INFINITY, f64::NEG_INFINITY, f64::NAN, 1e-300, -1e-9, 0.5493, -0.5493]);
            for cut in 0..4 {
                let mut wide = xs[cut..].to_vec();
                // SAFETY: AVX2 was detected just above.
                unsafe { avx::tanh_in_place(&mut wide) };
                for (got, &x) in wide.iter().zip(&xs[cut..]) {
                    assert_eq!(got.to_bits(), tanh(x).to_bits(), "tanh({x:e})");
                }
            }
        }
    }

    #[test]
    fn std_sqrt_gives_libm_bits() {
        // IEEE 754-2008, Section 5.4.1: square root is correctly rounded, so the
        // instruction (f64::sqrt, used by the core) and libm's software routine
        // agree bit for bit; checked on a wide sample, subnormals included.
        let mut x = 5e-324f64;
        while x < 1e300 {
            for y in [x, x * 1.37, x * 2.99] {
                assert_eq!(y.sqrt().to_bits(), libm::sqrt(y).to_bits(), "{y:e}");
            }
            x *= 1.9;
        }
        assert!((-1.0f64).sqrt().is_nan() && libm::sqrt(-1.0).is_nan());
    }

    #[test]
    fn blocked_backprop_equals_row_by_row() {
        // Common practice, no source: the blocked kernel gives the bits of the
        // plain row-by-row loop, for row counts around the block size.
        for rows in [1, 3, 4, 6, 8, 11] {
            let n = 7;
            let g: Vec<f64> = (0..rows).map(|i| (i as f64 * 0.7).sin()).collect();
            let c: Vec<f64> = g.iter().map(|v| 0.01 * v).collect();
            let input: Vec<f64> = (0..n).map(|i| (i as f64 * 0.3).cos()).collect();
            let m0: Vec<f64> = (0..rows * n).map(|i| (i as f64 * 0.19).sin()).collect();
            let (mut m, mut below) = (m0.clone(), vec![0.5; n]);
            backprop_step(&g, &c, &input, &mut m, &mut below);
            let (mut m2, mut below2) = (m0.clone(), vec![0.5; n]);
            for r in 0..rows {
                for i in 0..n {
                    below2[i] += g[r] * m2[r * n + i];
                }
                for i in 0..n {
                    m2[r * n + i] += c[r] * input[i];
                }
            }
            assert_eq!(m, m2, "rows = {rows}");
            assert_eq!(below, below2, "rows = {rows}");
        }
    }

    #[test]
    fn dot_and_axpy_match_plain_sums() {
        // Common practice, no source: the interleaved sum equals a plain sum
        // within rounding, for every length around the lane count.
        for n in 0..40 {
            let a: Vec<f64> = (0..n).map(|i| (i as f64 * 0.37).sin()).collect();
            let b: Vec<f64> = (0..n).map(|i| (i as f64 * 0.11).cos()).collect();
            let plain: f64 = a.iter().zip(&b).map(|(x, y)| x * y).sum();
            assert!((dot(&a, &b) - plain).abs() < 1e-13, "n = {n}");
            // The blocked matrix-vector product gives dot's bits, row by row.
            for rows in [1, 3, 4, 5, 9] {
                let m: Vec<f64> = (0..rows * n).map(|i| (i as f64 * 0.53).sin()).collect();
                let bias: Vec<f64> = (0..rows).map(|i| i as f64 * 0.1).collect();
                let mut out = vec![0.0; rows];
                matvec(&m, &a, &bias, &mut out);
                for r in 0..rows {
                    assert_eq!(out[r], bias[r] + dot(&m[r * n..(r + 1) * n], &a), "n = {n}, row {r}");
                }
            }
            let mut y = b.clone();
            axpy(0.5, &a, &mut y);
            for i in 0..n {
                assert_eq!(y[i], b[i] + 0.5 * a[i]);
            }
        }
        // Small integers are summed exactly whatever the order.
        let a: Vec<f64> = (1..=21).map(|i| i as f64).collect();
        assert_eq!(dot(&a, &a), (21 * 22 * 43 / 6) as f64);
    }
}
