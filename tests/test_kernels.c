/*
 * test_kernels.c - the runner's signal kernels checked against outside
 * references: the definition of an FIR filter's impulse response, an
 * independent double-precision direct-form-I biquad, a direct DFT, and the
 * FFTW library (fftwf_plan_dft_1d / fftw_plan_dft_1d).
 */
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <cmocka.h>

#include <complex.h>
#include <fftw3.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "pacemap/kernels.h"

static pm_kernel *make(pm_work_kind kind, uint32_t param, uint32_t block)
{
    pm_kernel *k = NULL;
    assert_int_equal(pm_kernel_create(kind, param, block, 0, &k), PM_OK);
    assert_non_null(k);
    return k;
}

static void test_signal_range_and_determinism(void **state)
{
    (void)state;
    float a[1000], b[1000];
    pm_kernel_signal_fill(a, 1000, 3, 12345);
    pm_kernel_signal_fill(b, 1000, 3, 12345);
    assert_memory_equal(a, b, sizeof a);
    double sum = 0, sq = 0;
    for (int i = 0; i < 1000; i++) {
        assert_true(a[i] >= -0.5f && a[i] < 0.5f);
        sum += a[i];
        sq += (double)a[i] * a[i];
    }
    /* not a constant and roughly zero-mean */
    assert_true(sq / 1000 - (sum / 1000) * (sum / 1000) > 0.01);
    pm_kernel_signal_fill(b, 1000, 4, 12345);
    assert_true(memcmp(a, b, sizeof a) != 0);
}

/* An FIR filter's impulse response is its coefficient sequence
 * (Oppenheim & Schafer, Discrete-Time Signal Processing, 3rd ed. 2010,
 * §6.5, eq. 6.40: h[n] = b_n for 0 <= n <= M).  The impulse sits near the
 * end of a block so the response must carry over into the next blocks. */
static void test_fir_impulse_response_is_taps(void **state)
{
    (void)state;
    const uint32_t taps = 37, block = 16;
    pm_kernel *k = make(PM_WORK_FIR, taps, block);
    float in[16] = {0}, out[16], resp[64];
    in[13] = 1.0f;
    for (int b = 0; b < 4; b++) {
        pm_kernel_process(k, in, out);
        memcpy(resp + 16 * b, out, sizeof out);
        in[13] = 0.0f;
    }
    double sum = 0;
    for (uint32_t n = 0; n < 64; n++) {
        float want = (n >= 13 && n < 13 + taps) ? pm_kernel_fir_tap(taps, n - 13) : 0.0f;
        assert_true(resp[n] == want);
        if (n >= 13 && n < 13 + taps)
            sum += want;
    }
    /* the taps are a normalised triangle: unit DC gain, symmetric */
    assert_true(fabs(sum - 1.0) < 1e-6);
    assert_true(pm_kernel_fir_tap(taps, 0) == pm_kernel_fir_tap(taps, taps - 1));
    pm_kernel_reset(k);
    memset(in, 0, sizeof in);
    pm_kernel_process(k, in, out);
    for (int n = 0; n < 16; n++)
        assert_true(out[n] == 0.0f);
    pm_kernel_destroy(k);
}

/* Reference: a cascade of second-order sections in direct form I, in double
 * precision, written from the difference equation
 * y[n] = b0 x[n] + b1 x[n-1] + b2 x[n-2] - a1 y[n-1] - a2 y[n-2]
 * (Oppenheim & Schafer, Discrete-Time Signal Processing, 3rd ed. 2010,
 * §6.3, Fig. 6.14, direct form I).  The kernel under test uses the
 * transposed direct form II in float, so agreement is to float rounding. */
static void biquad_reference(uint32_t sections, const float *x, double *y, size_t n)
{
    for (size_t i = 0; i < n; i++)
        y[i] = x[i];
    for (uint32_t s = 0; s < sections; s++) {
        float c[5];
        pm_kernel_biquad_coefs(s, c);
        double x1 = 0, x2 = 0, y1 = 0, y2 = 0;
        for (size_t i = 0; i < n; i++) {
            double xn = y[i];
            double yn = c[0] * xn + c[1] * x1 + c[2] * x2 - c[3] * y1 - c[4] * y2;
            x2 = x1; x1 = xn; y2 = y1; y1 = yn;
            y[i] = yn;
        }
    }
}

static void test_biquad_matches_direct_form_reference(void **state)
{
    (void)state;
    enum { BLOCK = 32, BLOCKS = 16, N = BLOCK * BLOCKS };
    const uint32_t sections = 6;
    float x[N], y[N];
    double ref[N];
    pm_kernel_signal_fill(x, N, 1, 0);
    x[5] += 1.0f; /* an impulse on top of the test signal */
    pm_kernel *k = make(PM_WORK_BIQUAD, sections, BLOCK);
    for (int b = 0; b < BLOCKS; b++)
        pm_kernel_process(k, x + b * BLOCK, y + b * BLOCK);
    biquad_reference(sections, x, ref, N);
    double peak = 0;
    for (int i = 0; i < N; i++) {
        assert_true(fabs(y[i] - ref[i]) <= 1e-5);
        peak = fmax(peak, fabs(ref[i]));
    }
    assert_true(peak > 0.05); /* the comparison is not between two zeros */
    pm_kernel_destroy(k);
    /* unity DC gain per section: sum b / (1 + a1 + a2) == 1 */
    float c[5];
    pm_kernel_biquad_coefs(4, c);
    assert_true(fabs((c[0] + c[1] + c[2]) / (1.0 + c[3] + c[4]) - 1.0) < 1e-6);
}

/* Direct DFT in double precision, X[k] = sum_n x[n] e^{-2 pi i k n / N}
 * (Oppenheim & Schafer 2010, eq. 8.61). */
static void dft(const float *xr, const float *xi, double *yr, double *yi, uint32_t n)
{
    for (uint32_t k = 0; k < n; k++) {
        double sr = 0, si = 0;
        for (uint32_t j = 0; j < n; j++) {
            double a = -2.0 * M_PI * (double)((uint64_t)k * j % n) / n;
            sr += xr[j] * cos(a) - xi[j] * sin(a);
            si += xr[j] * sin(a) + xi[j] * cos(a);
        }
        yr[k] = sr;
        yi[k] = si;
    }
}

static void fft_input(float *re, float *im, uint32_t n)
{
    pm_kernel_signal_fill(re, n, 7, 0);
    pm_kernel_signal_fill(im, n, 8, 0);
}

static void test_fft_matches_direct_dft(void **state)
{
    (void)state;
    for (uint32_t n = 2; n <= 512; n *= 2) {
        float *re = malloc(n * sizeof *re), *im = malloc(n * sizeof *im);
        double *yr = malloc(n * sizeof *yr), *yi = malloc(n * sizeof *yi);
        assert_true(re && im && yr && yi);
        fft_input(re, im, n);
        dft(re, im, yr, yi, n);
        pm_kernel_fft *f = NULL;
        assert_int_equal(pm_kernel_fft_create(n, &f), PM_OK);
        pm_kernel_fft_forward(f, re, im);
        double tol = 1e-6 * n + 1e-6; /* |x| < 0.5: float rounding grows ~ log N */
        for (uint32_t k = 0; k < n; k++) {
            assert_true(fabs(re[k] - yr[k]) < tol);
            assert_true(fabs(im[k] - yi[k]) < tol);
        }
        pm_kernel_fft_destroy(f);
        free(re); free(im); free(yr); free(yi);
    }
}

/* FFTW 3 (Frigo & Johnson, Proc. IEEE 2005), library functions
 * fftwf_plan_dft_1d (single) and fftw_plan_dft_1d (double), FFTW_FORWARD:
 * the same sign convention and no scaling. */
static void test_fft_matches_fftw(void **state)
{
    (void)state;
    const uint32_t n = 4096;
    float *re = malloc(n * sizeof *re), *im = malloc(n * sizeof *im);
    fftwf_complex *fi = fftwf_malloc(n * sizeof *fi), *fo = fftwf_malloc(n * sizeof *fo);
    fftw_complex *di = fftw_malloc(n * sizeof *di), *dout = fftw_malloc(n * sizeof *dout);
    assert_true(re && im && fi && fo && di && dout);
    fft_input(re, im, n);
    for (uint32_t j = 0; j < n; j++) {
        fi[j] = re[j] + im[j] * I;
        di[j] = (double)re[j] + (double)im[j] * I;
    }
    fftwf_plan pf = fftwf_plan_dft_1d((int)n, fi, fo, FFTW_FORWARD, FFTW_ESTIMATE);
    fftw_plan pd = fftw_plan_dft_1d((int)n, di, dout, FFTW_FORWARD, FFTW_ESTIMATE);
    fftwf_execute(pf);
    fftw_execute(pd);
    pm_kernel_fft *f = NULL;
    assert_int_equal(pm_kernel_fft_create(n, &f), PM_OK);
    pm_kernel_fft_forward(f, re, im);
    for (uint32_t k = 0; k < n; k++) {
        assert_true(fabs(re[k] - crealf(fo[k])) < 2e-3);
        assert_true(fabs(im[k] - cimagf(fo[k])) < 2e-3);
        assert_true(fabs(re[k] - creal(dout[k])) < 2e-3);
        assert_true(fabs(im[k] - cimag(dout[k])) < 2e-3);
    }
    pm_kernel_fft_destroy(f);
    fftwf_destroy_plan(pf);
    fftw_destroy_plan(pd);
    fftwf_free(fi); fftwf_free(fo); fftw_free(di); fftw_free(dout);
    fftwf_cleanup();
    fftw_cleanup();
    free(re); free(im);
}

/* The fft node: out[i] = Re DFT(in padded/wrapped to N)[i mod N] / N,
 * checked against the direct DFT above. */
static void test_fft_node_block_mapping(void **state)
{
    (void)state;
    enum { B = 24, N = 16 };
    float in[B], out[B], zr[N], zi[N] = {0};
    double yr[N], yi[N];
    pm_kernel_signal_fill(in, B, 2, 99);
    for (int j = 0; j < N; j++)
        zr[j] = in[j % B];
    dft(zr, zi, yr, yi, N);
    pm_kernel *k = make(PM_WORK_FFT, N, B);
    pm_kernel_process(k, in, out);
    for (int i = 0; i < B; i++)
        assert_true(fabs(out[i] - yr[i % N] / N) < 1e-6);
    pm_kernel_destroy(k);
}

static void test_spin_passes_input_through(void **state)
{
    (void)state;
    float in[8], out[8];
    pm_kernel_signal_fill(in, 8, 0, 0);
    pm_kernel *k = NULL;
    assert_int_equal(pm_kernel_create(PM_WORK_SPIN, 0, 8, 1000, &k), PM_OK);
    pm_kernel_process(k, in, out);
    assert_memory_equal(in, out, sizeof in);
    pm_kernel_destroy(k);
    assert_int_not_equal(pm_kernel_spin(10), pm_kernel_spin(11));
}

static void test_bad_parameters(void **state)
{
    (void)state;
    pm_kernel *k = (pm_kernel *)1;
    assert_int_equal(pm_kernel_create(PM_WORK_FFT, 12, 8, 0, &k), PM_ERANGE);
    assert_null(k);
    assert_int_equal(pm_kernel_create(PM_WORK_FFT, 1, 8, 0, &k), PM_ERANGE);
    assert_int_equal(pm_kernel_create(PM_WORK_FIR, 0, 8, 0, &k), PM_ERANGE);
    assert_int_equal(pm_kernel_create(PM_WORK_BIQUAD, PM_KERNEL_MAX_SECTIONS + 1, 8, 0, &k),
                     PM_ERANGE);
    assert_int_equal(pm_kernel_create(PM_WORK_FIR, 4, 0, 0, &k), PM_ERANGE);
    pm_kernel_fft *f = (pm_kernel_fft *)1;
    assert_int_equal(pm_kernel_fft_create(3, &f), PM_ERANGE);
    assert_null(f);
    pm_kernel_destroy(NULL);
    pm_kernel_fft_destroy(NULL);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_signal_range_and_determinism),
        cmocka_unit_test(test_fir_impulse_response_is_taps),
        cmocka_unit_test(test_biquad_matches_direct_form_reference),
        cmocka_unit_test(test_fft_matches_direct_dft),
        cmocka_unit_test(test_fft_matches_fftw),
        cmocka_unit_test(test_fft_node_block_mapping),
        cmocka_unit_test(test_spin_passes_input_through),
        cmocka_unit_test(test_bad_parameters),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
