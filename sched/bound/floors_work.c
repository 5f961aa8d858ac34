/*
 * floors_work.c - the work floor for core classes: the fractional-assignment
 * bound, computed exactly.
 *
 * The period T of any map is at least the load of its busiest core, and a
 * map is one assignment of whole nodes to cores; letting each node's work
 * be split across the classes it may run on only lowers the load, so the
 * optimum of the linear programme
 *     minimise T  s.t.  sum_k x_vk = 1,  sum_v x_vk t_vk <= n_k T,  x >= 0
 * (x_vk the share of node v run on class k, n_k its cores) is a floor: the
 * LP relaxation of unrelated-machine makespan, as in Lenstra, Shmoys &
 * Tardos, Math. Programming 46 (1990).  Its dual says that for every y >= 0
 * with sum_k n_k y_k = 1,  f(y) = sum_v min_k y_k t_vk  is at most T (sum
 * the load constraints weighted by y_k and use x_vk >= 0, sum_k x_vk = 1).
 * So any y gives a proven floor once f(y) is evaluated exactly; doubles are
 * used only to choose y.  f is concave and piecewise linear, and its
 * maximum (the LP optimum, by duality) lies at a vertex where the classes
 * with y_k > 0 are tied together by nodes at their minimum on two classes:
 * y_a t_va = y_b t_vb.  Those ties fix the ratios of y exactly.  So: for
 * one class the only y gives work / P; for more, Kelley's cutting planes
 * (J. SIAM 8, 1960; a small simplex in doubles) find the optimal y, the
 * ties at it give the vertex in integers, and f is evaluated there
 * exactly: the LP optimum as an exact fraction.  For two classes the
 * breakpoints beside the optimum are also tried.  Should rounding mislead
 * the search, or the vertex's weights outgrow 62 bits, the result is f at
 * the y found: still a proven floor, possibly below the optimum (the tests
 * compare with GLPK on random platforms of 2 to 4 classes).  What it does
 * not do: the other floors (floors.c, floors_map.c).
 */
#include "bound_internal.h"

#include <math.h>
#include <stdlib.h>

#define FW_SCALE 1e15  /* y in integers: a_k = y_k / max y * FW_SCALE (< 2^50) */

typedef struct fw_ctx {
    const pm_graph *g;
    const uint32_t *counts;
    uint32_t k;
} fw_ctx;

/* The class a pin fixes for node v, or PM_NONE. */
uint32_t bound_pinned_class(const pm_graph *g, uint32_t v)
{
    const pm_node *n = &g->nodes[v];
    if (n->pin_core != PM_NONE && n->pin_core < g->platform.ncores)
        return g->platform.core_class[n->pin_core];
    return n->pin_class;
}

/* Time of v on class k when v may run there (pin, cycles, cores), else -1. */
int64_t bound_class_time(const pm_graph *g, const uint32_t *counts, uint32_t v, uint32_t k)
{
    uint32_t pin = bound_pinned_class(g, v);
    if ((pin != PM_NONE && pin != k) || counts[k] == 0)
        return -1;
    return pm_graph_cycles_on(g, v, k);
}

/* f(a / sum n_k a_k) exactly, for integer weights a_k >= 0 (not all 0).
 * Rounded down to an integer when the reduced fraction outgrows 64 bits. */
static int fw_eval(const fw_ctx *x, const int64_t *a, pm_rat *out)
{
    pm_i128 s = 0, d = 0;
    const pm_i128 cap = (pm_i128)1 << 124;
    for (uint32_t k = 0; k < x->k; k++)
        d += (pm_i128)x->counts[k] * a[k];
    for (uint32_t v = 0; v < x->g->nnodes; v++) {
        pm_i128 best = -1;
        for (uint32_t k = 0; k < x->k; k++) {
            int64_t t = bound_class_time(x->g, x->counts, v, k);
            pm_i128 w = (pm_i128)a[k] * (t < 0 ? 0 : t);
            if (t >= 0 && (best < 0 || w < best))
                best = w;
        }
        if (best < 0)
            return PM_EPLATFORM;
        if ((s += best) > cap)
            return PM_ERANGE;
    }
    if (d <= 0)
        return PM_EINVAL;
    pm_u128 gcd = pm_rat_gcd((pm_u128)s, (pm_u128)d);
    if (gcd > 1) {
        s /= (pm_i128)gcd;
        d /= (pm_i128)gcd;
    }
    if (d <= INT64_MAX && s <= INT64_MAX)
        return pm_rat_make((int64_t)s, (int64_t)d, out);
    if (s / d > INT64_MAX)
        return PM_ERANGE;
    *out = pm_rat_int((int64_t)(s / d)); /* a smaller floor, still proven */
    return PM_OK;
}

/* Replace *best by the exact f at integer weights a when that is larger. */
static int fw_try(const fw_ctx *x, const int64_t *a, pm_rat *best)
{
    pm_rat r;
    int rc = fw_eval(x, a, &r);
    if (rc == PM_OK && pm_rat_cmp(r, *best) > 0)
        *best = r;
    return rc;
}

/* Two classes: the breakpoints of f next to the numeric maximum s, and the
 * ends.  At node v's breakpoint, y = (t_v2, t_v1) / (n_1 t_v2 + n_2 t_v1). */
static int fw_two(const fw_ctx *x, double s, pm_rat *best)
{
    int64_t below[2] = { 0, 1 }, above[2] = { 1, 0 };
    double sb = 0, sa = 1 / (double)x->counts[0];
    for (uint32_t v = 0; v < x->g->nnodes; v++) {
        int64_t t1 = bound_class_time(x->g, x->counts, v, 0);
        int64_t t2 = bound_class_time(x->g, x->counts, v, 1);
        if (t1 <= 0 || t2 <= 0)
            continue;
        double bp = (double)t2 / ((double)x->counts[0] * (double)t2
                                  + (double)x->counts[1] * (double)t1);
        if (bp <= s && bp >= sb) {
            sb = bp;
            below[0] = t2, below[1] = t1;
        }
        if (bp >= s && bp <= sa) {
            sa = bp;
            above[0] = t2, above[1] = t1;
        }
    }
    const int64_t ends[2][2] = { { 1, 0 }, { 0, 1 } };
    int rc = fw_try(x, below, best);
    if (rc == PM_OK)
        rc = fw_try(x, above, best);
    for (int i = 0; i < 2 && rc == PM_OK; i++)
        rc = fw_try(x, ends[i], best);
    return rc;
}

/* ---- three or more classes: the optimal y, then its exact vertex ------- */

/* f(y) in doubles, and the load each class gets when every node goes to a
 * class where y_k t_vk is smallest: g, so that f(y) = g . y and, for every
 * y', f(y') <= g . y' (a node's minimum is at most any one of its terms). */
static double fw_cut(const fw_ctx *x, const double *y, double *g)
{
    double f = 0;
    for (uint32_t k = 0; k < x->k; k++)
        g[k] = 0;
    for (uint32_t v = 0; v < x->g->nnodes; v++) {
        double best = INFINITY;
        uint32_t at = 0;
        for (uint32_t k = 0; k < x->k; k++) {
            int64_t t = bound_class_time(x->g, x->counts, v, k);
            if (t >= 0 && y[k] * (double)t < best) {
                best = y[k] * (double)t;
                at = k;
            }
        }
        f += best;
        g[at] += (double)bound_class_time(x->g, x->counts, v, at);
    }
    return f;
}

/* The cutting-plane model: maximise z s.t. z <= g_j . y for every cut j,
 * sum n_k y_k <= 1, z, y >= 0; a dense simplex tableau with Bland's rule
 * (no cycling), whose origin is feasible.  Variables: z, y_0..y_{K-1},
 * then one slack per row.  Values in doubles: they only locate y. */
typedef struct fw_lp {
    uint32_t rows, cols; /* rows = cuts + 1; cols = 1 + K + rows + 1 (rhs) */
    double *t;           /* rows x cols */
    uint32_t *basis;     /* variable basic in each row */
} fw_lp;

static double *fw_at(fw_lp *lp, uint32_t r, uint32_t c)
{
    return &lp->t[(size_t)r * lp->cols + c];
}

static int fw_lp_build(fw_lp *lp, const fw_ctx *x, const double *cuts, uint32_t m, double scale)
{
    lp->rows = m + 1;
    lp->cols = 1 + x->k + lp->rows + 1;
    lp->t = calloc((size_t)lp->rows * lp->cols, sizeof *lp->t);
    lp->basis = calloc(lp->rows, sizeof *lp->basis);
    if (!lp->t || !lp->basis)
        return PM_ENOMEM;
    for (uint32_t r = 0; r < lp->rows; r++) {
        for (uint32_t k = 0; k < x->k; k++)
            *fw_at(lp, r, 1 + k) = r < m ? -cuts[(size_t)r * x->k + k] / scale
                                         : (double)x->counts[k];
        *fw_at(lp, r, 0) = r < m ? 1 : 0;
        *fw_at(lp, r, 1 + x->k + r) = 1;
        *fw_at(lp, r, lp->cols - 1) = r < m ? 0 : 1;
        lp->basis[r] = 1 + x->k + r;
    }
    return PM_OK;
}

static void fw_lp_pivot(fw_lp *lp, uint32_t pr, uint32_t pc)
{
    double p = *fw_at(lp, pr, pc);
    for (uint32_t c = 0; c < lp->cols; c++)
        *fw_at(lp, pr, c) /= p;
    for (uint32_t r = 0; r < lp->rows; r++) {
        double f = *fw_at(lp, r, pc);
        if (r == pr || f == 0)
            continue;
        for (uint32_t c = 0; c < lp->cols; c++)
            *fw_at(lp, r, c) -= f * *fw_at(lp, pr, c);
    }
    lp->basis[pr] = pc;
}

/* Reduced cost of column c for the objective z (column 0). */
static double fw_lp_cost(fw_lp *lp, uint32_t c)
{
    double d = c == 0 ? 1 : 0;
    for (uint32_t r = 0; r < lp->rows; r++)
        if (lp->basis[r] == 0)
            d -= *fw_at(lp, r, c);
    return d;
}

/* The ratio test's row for column c (the first of ties), or UINT32_MAX. */
static uint32_t fw_lp_row(fw_lp *lp, uint32_t c)
{
    uint32_t pr = UINT32_MAX;
    double best = INFINITY;
    for (uint32_t r = 0; r < lp->rows; r++) {
        double a = *fw_at(lp, r, c);
        if (a > 1e-9 && *fw_at(lp, r, lp->cols - 1) / a < best - 1e-15) {
            best = *fw_at(lp, r, lp->cols - 1) / a;
            pr = r;
        }
    }
    return pr;
}

/* Bland's rule: the first column that improves and has a pivot row (a
 * column without one is only rounding: the model is bounded).  False when
 * none does (optimal). */
static bool fw_lp_step(fw_lp *lp)
{
    for (uint32_t c = 0; c + 1 < lp->cols; c++) {
        if (fw_lp_cost(lp, c) <= 1e-12)
            continue;
        uint32_t r = fw_lp_row(lp, c);
        if (r != UINT32_MAX) {
            fw_lp_pivot(lp, r, c);
            return true;
        }
    }
    return false;
}

/* Solve the model; y gets the optimal y (zeros where not basic). */
static int fw_lp_solve(const fw_ctx *x, const double *cuts, uint32_t m, double scale, double *y)
{
    fw_lp lp = {0, 0, NULL, NULL};
    int rc = fw_lp_build(&lp, x, cuts, m, scale);
    for (uint32_t it = 0; rc == PM_OK && it < 50u * (m + x->k + 2) && fw_lp_step(&lp); it++)
        ;
    for (uint32_t k = 0; rc == PM_OK && k < x->k; k++)
        y[k] = 0;
    for (uint32_t r = 0; rc == PM_OK && r < lp.rows; r++)
        if (lp.basis[r] >= 1 && lp.basis[r] <= x->k)
            y[lp.basis[r] - 1] = fmax(0, *fw_at(&lp, r, lp.cols - 1));
    free(lp.t);
    free(lp.basis);
    return rc;
}

#define FW_KELLEY 200 /* cuts at most (each new one is another assignment) */

/* Kelley's cutting planes (J. SIAM 1960) on the concave piecewise-linear
 * f: the model's optimum y, a new cut at it, until f(y) reaches the model
 * (f has finitely many pieces, so this ends).  y gets the last optimum. */
static int fw_kelley(const fw_ctx *x, double *y)
{
    double *cuts = malloc((size_t)FW_KELLEY * x->k * sizeof *cuts), scale = 1;
    if (!cuts)
        return PM_ENOMEM;
    double total = 0;
    for (uint32_t k = 0; k < x->k; k++)
        total += x->counts[k];
    for (uint32_t k = 0; k < x->k; k++)
        y[k] = 1 / total;
    int rc = PM_OK;
    for (uint32_t m = 0; m < FW_KELLEY && rc == PM_OK; m++) {
        double f = fw_cut(x, y, cuts + (size_t)m * x->k);
        for (uint32_t k = 0; k < x->k; k++)
            scale = fmax(scale, cuts[(size_t)m * x->k + k]);
        double z = 0;
        if (m > 0) {
            z = INFINITY;
            for (uint32_t j = 0; j < m; j++) {
                double gy = 0;
                for (uint32_t k = 0; k < x->k; k++)
                    gy += cuts[(size_t)j * x->k + k] * y[k];
                z = fmin(z, gy);
            }
            if (f >= z - 1e-12 * fmax(1, fabs(z)))
                break;
        }
        rc = fw_lp_solve(x, cuts, m + 1, scale, y);
    }
    free(cuts);
    return rc;
}

/* Exact ratio weights: w_k = num_k / den_k, kept reduced, within 62 bits. */
typedef struct fw_frac {
    pm_i128 num, den;
    bool set;
} fw_frac;

static bool fw_frac_mul(fw_frac *w, const fw_frac *from, int64_t tn, int64_t td)
{
    pm_i128 n = from->num * tn, d = from->den * td;
    pm_u128 gcd = pm_rat_gcd((pm_u128)n, (pm_u128)d);
    if (gcd > 1) {
        n /= (pm_i128)gcd;
        d /= (pm_i128)gcd;
    }
    if (n > PM_MAX_VALUE || d > PM_MAX_VALUE || d <= 0)
        return false;
    *w = (fw_frac){n, d, true};
    return true;
}

/* Whether v is at its minimum on class k at y, within rounding. */
static bool fw_tight(const fw_ctx *x, const double *y, uint32_t v, uint32_t k, double min)
{
    int64_t t = bound_class_time(x->g, x->counts, v, k);
    return t >= 0 && y[k] > 0 && y[k] * (double)t <= min * (1 + 1e-9) + 1e-300;
}

static double fw_node_min(const fw_ctx *x, const double *y, uint32_t v)
{
    double min = INFINITY;
    for (uint32_t k = 0; k < x->k; k++) {
        int64_t t = bound_class_time(x->g, x->counts, v, k);
        if (t >= 0)
            min = fmin(min, y[k] * (double)t);
    }
    return min;
}

/* One pass over the nodes: every node at its minimum on a set class a and
 * an unset class b gives y_b = y_a t_va / t_vb exactly.  True if it set one. */
static bool fw_spread(const fw_ctx *x, const double *y, fw_frac *w, bool *ok)
{
    for (uint32_t v = 0; v < x->g->nnodes; v++) {
        double min = fw_node_min(x, y, v);
        if (!(min > 0))
            continue;
        for (uint32_t a = 0; a < x->k; a++) {
            if (!w[a].set || !fw_tight(x, y, v, a, min))
                continue;
            for (uint32_t b = 0; b < x->k; b++)
                if (!w[b].set && fw_tight(x, y, v, b, min)) {
                    *ok = fw_frac_mul(&w[b], &w[a], bound_class_time(x->g, x->counts, v, a),
                                      bound_class_time(x->g, x->counts, v, b));
                    return true;
                }
        }
    }
    return false;
}

/* The vertex of f at the numeric optimum y, exactly: the classes with
 * y > 0 are tied to each other through nodes at their minimum on two
 * classes; those ties fix the ratios of y.  Integer weights into a when
 * they reach every such class and fit; else false. */
static bool fw_snap(const fw_ctx *x, const double *y, int64_t *a, fw_frac *w)
{
    uint32_t top = 0;
    for (uint32_t k = 0; k < x->k; k++) {
        w[k] = (fw_frac){0, 1, false};
        if (y[k] > y[top])
            top = k;
    }
    if (!(y[top] > 0))
        return false;
    w[top] = (fw_frac){1, 1, true};
    bool ok = true;
    while (ok && fw_spread(x, y, w, &ok))
        ;
    pm_i128 lcm = 1;
    for (uint32_t k = 0; ok && k < x->k; k++) {
        if (y[k] > 1e-12 * y[top] && !w[k].set)
            return false;
        if (w[k].set)
            lcm = lcm / (pm_i128)pm_rat_gcd((pm_u128)lcm, (pm_u128)w[k].den) * w[k].den;
        ok = lcm <= PM_MAX_VALUE;
    }
    for (uint32_t k = 0; ok && k < x->k; k++) {
        pm_i128 v = w[k].set ? w[k].num * (lcm / w[k].den) : 0;
        ok = v <= PM_MAX_VALUE;
        a[k] = (int64_t)v;
    }
    return ok;
}

/* Numeric search for y, then the exact floor at its vertex, and at y
 * rounded to integers (a floor either way). */
static int fw_search(const fw_ctx *x, double *y, pm_rat *best)
{
    int rc = fw_kelley(x, y);
    int64_t *a = calloc(x->k, sizeof *a);
    fw_frac *w = calloc(x->k, sizeof *w);
    if (rc == PM_OK && (!a || !w))
        rc = PM_ENOMEM;
    if (rc == PM_OK && fw_snap(x, y, a, w))
        rc = fw_try(x, a, best);
    double ymax = 0;
    for (uint32_t k = 0; rc == PM_OK && k < x->k; k++)
        ymax = fmax(ymax, y[k]);
    for (uint32_t k = 0; rc == PM_OK && k < x->k; k++)
        a[k] = ymax > 0 ? llround(y[k] / ymax * FW_SCALE) : 1;
    if (rc == PM_OK)
        rc = fw_try(x, a, best);
    free(a);
    free(w);
    return rc;
}

int pm_bound_work_floor(const pm_graph *g, const uint32_t *counts, pm_rat *out)
{
    if (!g || !counts || !out)
        return PM_EINVAL;
    fw_ctx x = { g, counts, g->platform.nclasses };
    *out = pm_rat_int(0);
    /* the y that puts all mass on one class with cores: always a candidate */
    int64_t *a = calloc(x.k, sizeof *a);
    double *y = calloc(x.k, sizeof *y);
    int rc = a && y ? PM_OK : PM_ENOMEM;
    for (uint32_t k = 0; rc == PM_OK && k < x.k; k++) {
        if (!counts[k])
            continue;
        a[k] = 1;
        rc = fw_try(&x, a, out);
        a[k] = 0;
    }
    /* y_k = 1 / P: total work at each node's fastest class / P, the floor
     * for identical cores, so the result is never below it */
    for (uint32_t k = 0; rc == PM_OK && k < x.k; k++)
        a[k] = 1;
    if (rc == PM_OK && x.k > 1)
        rc = fw_try(&x, a, out);
    if (rc == PM_OK && x.k > 1)
        rc = fw_search(&x, y, out);
    if (rc == PM_OK && x.k == 2 && counts[0] && counts[1])
        rc = fw_two(&x, y[0], out);
    free(a);
    free(y);
    return rc;
}
