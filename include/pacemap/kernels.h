/*
 * kernels.h - the signal-processing work the real-core runner executes for
 * a node (docs/runner.md): FIR filter, biquad cascade, radix-2 FFT, and the
 * calibrated busy loop, all over blocks of float samples, plus the
 * deterministic test signal that feeds the source nodes.
 *
 * Every kernel is deterministic: the same inputs in the same order give
 * bit-identical outputs on any thread (fixed summation order, no fused
 * multiply-add under -std=c11, no global state).  That is what lets the
 * runner compare a multi-threaded run with a single-threaded one exactly.
 *
 * Not here: threads, timing, rings (see runner.h, ring.h).
 *
 * Ownership: a pm_kernel owns its coefficients and state;
 * pm_kernel_destroy(NULL) is a no-op.  A kernel is used by one thread at a
 * time (it keeps filter state between calls).
 */
#ifndef PACEMAP_KERNELS_H
#define PACEMAP_KERNELS_H

#include <stddef.h>
#include <stdint.h>

#include "pacemap/error.h"
#include "pacemap/graph.h"

#define PM_KERNEL_MAX_TAPS     65536u     /* fir:TAPS */
#define PM_KERNEL_MAX_SECTIONS 4096u      /* biquad:SECTIONS */
#define PM_KERNEL_MAX_FFT      (1u << 20) /* fft:N */
#define PM_KERNEL_MAX_BLOCK    (1u << 16) /* samples per token */

/* Sample i of test stream `stream`: half a triangle wave of period 64, half
 * white noise from a 64-bit mix of (stream, i).  Exact in float (both parts
 * are small dyadic fractions), in [-0.5, 0.5).  O(1), thread-safe. */
float pm_kernel_signal_sample(uint32_t stream, uint64_t i);

/* out[j] = pm_kernel_signal_sample(stream, first + j) for j < n. */
void pm_kernel_signal_fill(float *out, size_t n, uint32_t stream, uint64_t first);

/* Busy loop of `turns` dependent integer steps; returns a value the caller
 * must use (store it) so the compiler keeps the loop.  O(turns). */
uint32_t pm_kernel_spin(uint64_t turns);

/* FIR tap k of a `taps`-tap filter: a triangular (Bartlett) window
 * normalised to sum 1, so the gain is at most 1 at every frequency. */
float pm_kernel_fir_tap(uint32_t taps, uint32_t k);

/* Coefficients of biquad section s: {b0, b1, b2, a1, a2} of
 * H(z) = (b0 + b1 z^-1 + b2 z^-2) / (1 + a1 z^-1 + a2 z^-2), a low-pass with
 * two real poles in (0,1) and a double zero at z = -1, unity gain at DC
 * (so |H| <= 1: a graph loop of these never grows without bound). */
void pm_kernel_biquad_coefs(uint32_t s, float c[5]);

/* An N-point forward complex FFT, N a power of two in [2, PM_KERNEL_MAX_FFT]
 * (iterative radix-2 decimation in time, Cooley & Tukey, Math. Comp. 1965),
 * in place on re[0..N), im[0..N); X[k] = sum x[n] e^{-2 pi i k n / N},
 * unscaled.  PM_ERANGE for a bad N, PM_ENOMEM. */
typedef struct pm_kernel_fft pm_kernel_fft;
int pm_kernel_fft_create(uint32_t n, pm_kernel_fft **out);
void pm_kernel_fft_destroy(pm_kernel_fft *f);
void pm_kernel_fft_forward(const pm_kernel_fft *f, float *re, float *im);

/*
 * A node's work on blocks of `block` samples.  Input block in, output block
 * out (distinct buffers):
 *   spin:     out = in, then pm_kernel_spin(spin_turns);
 *   fir:T     a T-tap FIR (pm_kernel_fir_tap) with state carried between blocks;
 *   biquad:S  S cascaded sections (pm_kernel_biquad_coefs), transposed direct
 *             form II, state carried between blocks;
 *   fft:N     z[j] = in[j mod block] (j < N), Z = FFT(z),
 *             out[i] = Re Z[i mod N] / N.
 * pm_kernel_create: PM_ERANGE when param or block is out of range (limits
 * above; an fft size must be a power of two), PM_ENOMEM.
 */
typedef struct pm_kernel pm_kernel;
int pm_kernel_create(pm_work_kind kind, uint32_t param, uint32_t block,
                     uint64_t spin_turns, pm_kernel **out);
void pm_kernel_destroy(pm_kernel *k);

/* Run one block.  O(block * T) for fir, O(block * S) for biquad,
 * O(N log N + block) for fft, O(block + turns) for spin. */
void pm_kernel_process(pm_kernel *k, const float *in, float *out);

/* Clear the filter state, as if no block had been processed. */
void pm_kernel_reset(pm_kernel *k);

#endif
