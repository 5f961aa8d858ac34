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
 * used only to choose y.  f is concave and piecewise linear: for one class
 * the only y gives work / P; for two classes its maximum lies at an end or
 * at a node's breakpoint y_1 t_v1 = y_2 t_v2, which is evaluated exactly;
 * for more classes a coordinate search over pairs picks y (a floor that
 * may stay below the LP optimum).  What it does not do: the other floors
 * (floors.c, floors_map.c).
 */
#include "bound_internal.h"

#include <math.h>
#include <stdlib.h>

#define FW_BISECT 60   /* bisection steps of a line search (double precision) */
#define FW_ROUNDS 6    /* passes over all class pairs for three or more classes */
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

/* f(y) in doubles and its right derivative along the direction that moves
 * mass from class b to class a (d y_a = 1, d y_b = -n_a / n_b). */
static double fw_value(const fw_ctx *x, const double *y, uint32_t a, uint32_t b,
                       double *slope)
{
    double f = 0, sl = 0, dir_b = -(double)x->counts[a] / (double)x->counts[b];
    for (uint32_t v = 0; v < x->g->nnodes; v++) {
        double best = INFINITY, bs = 0;
        for (uint32_t k = 0; k < x->k; k++) {
            int64_t t = bound_class_time(x->g, x->counts, v, k);
            if (t < 0)
                continue;
            double w = y[k] * (double)t;
            double s = k == a ? (double)t : k == b ? dir_b * (double)t : 0;
            if (w < best || (w == best && s < bs)) {
                best = w;
                bs = s;
            }
        }
        f += best;
        sl += bs;
    }
    *slope = sl;
    return f;
}

/* Best split of the mass of classes a and b, the others fixed: bisection on
 * the sign of the derivative of the concave f along the line. */
static void fw_line(const fw_ctx *x, double *y, uint32_t a, uint32_t b)
{
    double m = (double)x->counts[a] * y[a] + (double)x->counts[b] * y[b];
    double lo = 0, hi = m / (double)x->counts[a], slope;
    for (int i = 0; i < FW_BISECT; i++) {
        double mid = (lo + hi) / 2;
        y[a] = mid;
        y[b] = (m - (double)x->counts[a] * mid) / (double)x->counts[b];
        (void)fw_value(x, y, a, b, &slope);
        if (slope > 0)
            lo = mid;
        else
            hi = mid;
    }
    y[a] = lo;
    y[b] = fmax(0, (m - (double)x->counts[a] * lo) / (double)x->counts[b]);
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

/* Numeric search for y, then the exact floor at it (rounded to integers). */
static int fw_search(const fw_ctx *x, double *y, pm_rat *best)
{
    double total = 0;
    for (uint32_t k = 0; k < x->k; k++)
        total += x->counts[k];
    for (uint32_t k = 0; k < x->k; k++)
        y[k] = 1 / total;
    int rounds = x->k == 2 ? 1 : FW_ROUNDS;
    for (int r = 0; r < rounds; r++)
        for (uint32_t a = 0; a < x->k; a++)
            for (uint32_t b = a + 1; b < x->k; b++)
                if (x->counts[a] && x->counts[b])
                    fw_line(x, y, a, b);
    if (x->k == 2 && x->counts[0] && x->counts[1])
        return fw_two(x, y[0], best);
    double ymax = 0;
    for (uint32_t k = 0; k < x->k; k++)
        ymax = fmax(ymax, y[k]);
    int64_t *a = calloc(x->k, sizeof *a);
    if (!a)
        return PM_ENOMEM;
    for (uint32_t k = 0; k < x->k; k++)
        a[k] = ymax > 0 ? llround(y[k] / ymax * FW_SCALE) : 1;
    int rc = fw_try(x, a, best);
    free(a);
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
    free(a);
    free(y);
    return rc;
}
