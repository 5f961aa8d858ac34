/*
 * kernels.c - FIR, biquad cascade, radix-2 FFT and the busy loop that the
 * real-core runner executes per node, and the deterministic test signal.
 *
 * Everything here is plain sequential float arithmetic in a fixed order, so
 * results are bit-identical whichever thread runs them.  No threads, no
 * timing, no printing.
 */
#include "pacemap/kernels.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

/* ---- test signal ---------------------------------------------------------- */

/* splitmix64 finaliser (Steele, Lea & Flood, OOPSLA 2014): a cheap mix that
 * turns consecutive indices into uncorrelated bits. */
static uint64_t kern_mix(uint64_t x)
{
    x += UINT64_C(0x9e3779b97f4a7c15);
    x = (x ^ (x >> 30)) * UINT64_C(0xbf58476d1ce4e5b9);
    x = (x ^ (x >> 27)) * UINT64_C(0x94d049bb133111eb);
    return x ^ (x >> 31);
}

float pm_kernel_signal_sample(uint32_t stream, uint64_t i)
{
    /* 23 random bits and a 6-bit ramp are exact in a float's 24-bit
     * mantissa, so the sum below rounds the same way everywhere */
    uint64_t r = kern_mix(i ^ ((uint64_t)stream << 40)) >> 41;
    float noise = (float)r / 16777216.0f - 0.25f;           /* [-0.25, 0.25) */
    uint32_t ph = (uint32_t)(i & 63u);
    float tri = (float)(ph < 32 ? ph : 64u - ph) / 64.0f - 0.25f; /* [-0.25, 0.25] */
    return noise + tri;
}

void pm_kernel_signal_fill(float *out, size_t n, uint32_t stream, uint64_t first)
{
    for (size_t j = 0; j < n; j++)
        out[j] = pm_kernel_signal_sample(stream, first + j);
}

uint32_t pm_kernel_spin(uint64_t turns)
{
    /* a dependent multiply-add chain: the CPU cannot overlap the steps and
     * the compiler cannot fold the loop, so time grows linearly in turns */
    uint32_t x = 1u;
    for (uint64_t t = 0; t < turns; t++)
        x = x * 1664525u + 1013904223u;
    return x;
}

/* ---- coefficients ---------------------------------------------------------- */

float pm_kernel_fir_tap(uint32_t taps, uint32_t k)
{
    /* triangle (k+1)(T-k), summed in closed form: sum_{k<T} (k+1)(T-k) =
     * T(T+1)(T+2)/6 */
    double t = taps;
    double w = (double)(k + 1u) * (double)(taps - k);
    return (float)(w / (t * (t + 1.0) * (t + 2.0) / 6.0));
}

void pm_kernel_biquad_coefs(uint32_t s, float c[5])
{
    float p1 = 0.5f + 0.05f * (float)(s % 5u);
    float p2 = 0.3f + 0.04f * (float)(s % 3u);
    float g = (1.0f - p1) * (1.0f - p2) / 4.0f;
    c[0] = g;
    c[1] = 2.0f * g;
    c[2] = g;
    c[3] = -(p1 + p2);
    c[4] = p1 * p2;
}

/* ---- FFT -------------------------------------------------------------------- */

struct pm_kernel_fft {
    uint32_t n;
    float *wr, *wi;     /* twiddles e^{-2 pi i k / n}, k < n/2 */
    uint32_t *rev;      /* bit-reversal permutation */
};

static int kern_log2(uint32_t n)
{
    int l = 0;
    while ((1u << l) < n)
        l++;
    return l;
}

int pm_kernel_fft_create(uint32_t n, pm_kernel_fft **out)
{
    *out = NULL;
    if (n < 2 || n > PM_KERNEL_MAX_FFT || (n & (n - 1u)))
        return PM_ERANGE;
    pm_kernel_fft *f = calloc(1, sizeof *f);
    if (!f)
        return PM_ENOMEM;
    f->n = n;
    f->wr = malloc(n / 2 * sizeof *f->wr);
    f->wi = malloc(n / 2 * sizeof *f->wi);
    f->rev = malloc(n * sizeof *f->rev);
    if (!f->wr || !f->wi || !f->rev) {
        pm_kernel_fft_destroy(f);
        return PM_ENOMEM;
    }
    const double two_pi = 6.283185307179586476925286766559;
    for (uint32_t k = 0; k < n / 2; k++) {
        f->wr[k] = (float)cos(two_pi * k / n);
        f->wi[k] = (float)-sin(two_pi * k / n);
    }
    int bits = kern_log2(n);
    for (uint32_t i = 0; i < n; i++) {
        uint32_t r = 0;
        for (int b = 0; b < bits; b++)
            r |= ((i >> b) & 1u) << (bits - 1 - b);
        f->rev[i] = r;
    }
    *out = f;
    return PM_OK;
}

void pm_kernel_fft_destroy(pm_kernel_fft *f)
{
    if (!f)
        return;
    free(f->wr);
    free(f->wi);
    free(f->rev);
    free(f);
}

void pm_kernel_fft_forward(const pm_kernel_fft *f, float *re, float *im)
{
    uint32_t n = f->n;
    for (uint32_t i = 0; i < n; i++) {
        uint32_t r = f->rev[i];
        if (r > i) {
            float t = re[i]; re[i] = re[r]; re[r] = t;
            t = im[i]; im[i] = im[r]; im[r] = t;
        }
    }
    for (uint32_t len = 2; len <= n; len <<= 1) {
        uint32_t half = len / 2, step = n / len;
        for (uint32_t base = 0; base < n; base += len) {
            for (uint32_t j = 0; j < half; j++) {
                float wr = f->wr[j * step], wi = f->wi[j * step];
                uint32_t a = base + j, b = a + half;
                float tr = re[b] * wr - im[b] * wi;
                float ti = re[b] * wi + im[b] * wr;
                re[b] = re[a] - tr;
                im[b] = im[a] - ti;
                re[a] = re[a] + tr;
                im[a] = im[a] + ti;
            }
        }
    }
}

/* ---- node kernels -------------------------------------------------------- */

struct pm_kernel {
    pm_work_kind kind;
    uint32_t param, block;
    uint64_t spin_turns;
    float *coef;      /* fir: taps; biquad: 5 per section */
    float *state;     /* fir: taps-1 + block history; biquad: 2 per section */
    float *re, *im;   /* fft work arrays */
    pm_kernel_fft *fft;
    volatile uint32_t sink; /* keeps the busy loop's result alive */
};

static int kern_check(pm_work_kind kind, uint32_t param, uint32_t block)
{
    if (block < 1 || block > PM_KERNEL_MAX_BLOCK)
        return PM_ERANGE;
    switch (kind) {
    case PM_WORK_SPIN: return PM_OK;
    case PM_WORK_FIR: return param >= 1 && param <= PM_KERNEL_MAX_TAPS ? PM_OK : PM_ERANGE;
    case PM_WORK_BIQUAD:
        return param >= 1 && param <= PM_KERNEL_MAX_SECTIONS ? PM_OK : PM_ERANGE;
    case PM_WORK_FFT:
        return param >= 2 && param <= PM_KERNEL_MAX_FFT && !(param & (param - 1u))
                   ? PM_OK : PM_ERANGE;
    }
    return PM_ERANGE;
}

static int kern_alloc(pm_kernel *k)
{
    uint32_t p = k->param, b = k->block;
    switch (k->kind) {
    case PM_WORK_SPIN: return PM_OK;
    case PM_WORK_FIR:
        k->coef = malloc(p * sizeof *k->coef);
        k->state = calloc((size_t)p - 1u + b, sizeof *k->state);
        if (!k->coef || !k->state)
            return PM_ENOMEM;
        for (uint32_t i = 0; i < p; i++)
            k->coef[i] = pm_kernel_fir_tap(p, i);
        return PM_OK;
    case PM_WORK_BIQUAD:
        k->coef = malloc((size_t)p * 5u * sizeof *k->coef);
        k->state = calloc((size_t)p * 2u, sizeof *k->state);
        if (!k->coef || !k->state)
            return PM_ENOMEM;
        for (uint32_t s = 0; s < p; s++)
            pm_kernel_biquad_coefs(s, k->coef + 5u * s);
        return PM_OK;
    case PM_WORK_FFT:
        k->re = malloc(p * sizeof *k->re);
        k->im = malloc(p * sizeof *k->im);
        if (!k->re || !k->im)
            return PM_ENOMEM;
        return pm_kernel_fft_create(p, &k->fft);
    }
    return PM_ERANGE;
}

int pm_kernel_create(pm_work_kind kind, uint32_t param, uint32_t block,
                     uint64_t spin_turns, pm_kernel **out)
{
    *out = NULL;
    int rc = kern_check(kind, param, block);
    if (rc != PM_OK)
        return rc;
    pm_kernel *k = calloc(1, sizeof *k);
    if (!k)
        return PM_ENOMEM;
    k->kind = kind;
    k->param = param;
    k->block = block;
    k->spin_turns = spin_turns;
    rc = kern_alloc(k);
    if (rc != PM_OK) {
        pm_kernel_destroy(k);
        return rc;
    }
    *out = k;
    return PM_OK;
}

void pm_kernel_destroy(pm_kernel *k)
{
    if (!k)
        return;
    free(k->coef);
    free(k->state);
    free(k->re);
    free(k->im);
    pm_kernel_fft_destroy(k->fft);
    free(k);
}

void pm_kernel_reset(pm_kernel *k)
{
    if (k->kind == PM_WORK_FIR)
        memset(k->state, 0, ((size_t)k->param - 1u + k->block) * sizeof *k->state);
    else if (k->kind == PM_WORK_BIQUAD)
        memset(k->state, 0, (size_t)k->param * 2u * sizeof *k->state);
}

static void kern_fir(pm_kernel *k, const float *in, float *out)
{
    /* hist = the last taps-1 inputs followed by this block */
    uint32_t t = k->param, b = k->block;
    float *hist = k->state;
    memcpy(hist + t - 1u, in, b * sizeof *in);
    for (uint32_t n = 0; n < b; n++) {
        const float *x = hist + n + t - 1u; /* x[0] is the newest sample */
        float acc = 0.0f;
        for (uint32_t i = 0; i < t; i++)
            acc += k->coef[i] * x[-(ptrdiff_t)i];
        out[n] = acc;
    }
    memmove(hist, hist + b, ((size_t)t - 1u) * sizeof *hist);
}

static void kern_biquad(pm_kernel *k, const float *in, float *out)
{
    /* transposed direct form II: two state words per section */
    memcpy(out, in, k->block * sizeof *in);
    for (uint32_t s = 0; s < k->param; s++) {
        const float *c = k->coef + 5u * s;
        float s1 = k->state[2u * s], s2 = k->state[2u * s + 1u];
        for (uint32_t n = 0; n < k->block; n++) {
            float x = out[n];
            float y = c[0] * x + s1;
            s1 = c[1] * x - c[3] * y + s2;
            s2 = c[2] * x - c[4] * y;
            out[n] = y;
        }
        k->state[2u * s] = s1;
        k->state[2u * s + 1u] = s2;
    }
}

static void kern_fft(pm_kernel *k, const float *in, float *out)
{
    uint32_t n = k->param, b = k->block;
    for (uint32_t j = 0; j < n; j++) {
        k->re[j] = in[j % b];
        k->im[j] = 0.0f;
    }
    pm_kernel_fft_forward(k->fft, k->re, k->im);
    float scale = 1.0f / (float)n; /* exact: n is a power of two */
    for (uint32_t i = 0; i < b; i++)
        out[i] = k->re[i % n] * scale;
}

void pm_kernel_process(pm_kernel *k, const float *in, float *out)
{
    switch (k->kind) {
    case PM_WORK_SPIN:
        memcpy(out, in, k->block * sizeof *in);
        k->sink = pm_kernel_spin(k->spin_turns);
        break;
    case PM_WORK_FIR: kern_fir(k, in, out); break;
    case PM_WORK_BIQUAD: kern_biquad(k, in, out); break;
    case PM_WORK_FFT: kern_fft(k, in, out); break;
    }
}
