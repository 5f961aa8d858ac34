/*
 * mapper.c - the period-first mapper: starting assignments, the local
 * search on core occupancy, the search on the exact period for graphs
 * with loops, and the exact optimum for small graphs without loops.
 * mapper_lags.c turns an assignment into a map with orders and lags and
 * times it exactly; mapper_exact.c holds the branch and bound.
 *
 * Why occupancy first: with lags the period of a graph without loops is
 * the busiest core's occupancy (mapper.h), which a move changes in
 * O(P + degree); the exact period (an IPC cycle ratio) costs a graph
 * build and a policy iteration, so it confirms rather than explores.
 *
 * What it does not do: map multirate graphs (mapper_multi.c does, on the
 * scenario's nodes), or print.  It simulates only to judge candidates on a
 * bus (mp_judge_period).
 */
#include "mapper_internal.h"

#include "pacemap/order.h"
#include "pacemap/sched.h"

#include <stdlib.h>
#include <string.h>

#define MP_STALE 64u     /* kicks in a row without a better map end the search */
#define MP_SWAP_ALL 256u /* larger graphs exchange only with the least busy core */
#define MP_SHARES 8      /* the list's and 4 constructions' descents get 1/8 each */

/* Occupancy key: busiest, then cores at the busiest, then total. */
typedef struct mp_okey {
    int64_t top, at_top, sum;
} mp_okey;

static mp_okey mp_okey_of(const int64_t *occ, uint32_t P)
{
    mp_okey k = { 0, 0, 0 };
    for (uint32_t c = 0; c < P; c++) {
        k.sum += occ[c];
        if (occ[c] > k.top) {
            k.top = occ[c];
            k.at_top = 1;
        } else if (occ[c] == k.top) {
            k.at_top++;
        }
    }
    return k;
}

static bool mp_okey_less(mp_okey a, mp_okey b)
{
    if (a.top != b.top)
        return a.top < b.top;
    if (a.at_top != b.at_top)
        return a.at_top < b.at_top;
    return a.sum < b.sum;
}

/* ---- occupancy deltas --------------------------------------------------- */

/* Add (sign +1) or remove (-1) what node v and its not yet counted edges
 * put on the cores under assign (PM_NONE: unplaced, charges nothing). */
static void mp_charge(mp_ctx *c, const uint32_t *assign, uint32_t v, uint32_t mark,
                      int64_t sign, int64_t *occ)
{
    const pm_graph *g = c->g;
    if (assign[v] != PM_NONE)
        occ[assign[v]] += sign * c->t[(size_t)v * c->P + assign[v]];
    for (int dir = 0; dir < 2; dir++) {
        const uint32_t *off = dir ? g->in_off : g->out_off;
        const uint32_t *ed = dir ? g->in_edge : g->out_edge;
        for (uint32_t k = off[v]; k < off[v + 1]; k++) {
            uint32_t e = ed[k];
            if (c->stamp[e] == mark)
                continue;
            c->stamp[e] = mark;
            uint32_t a = assign[g->edges[e].src], b = assign[g->edges[e].dst];
            if (a != PM_NONE && b != PM_NONE && a != b) {
                occ[a] += sign * c->send;
                occ[b] += sign * c->recv;
            }
        }
    }
}

/* The occupancies (into out) after nodes[i] move to to[i]; assign is
 * restored before returning. */
static void mp_delta(mp_ctx *c, uint32_t *assign, const uint32_t *nodes, const uint32_t *to,
                     uint32_t k, const int64_t *occ, int64_t *out, uint32_t *saved)
{
    if (c->stamp_now > UINT32_MAX - 4) {
        memset(c->stamp, 0, c->g->nedges * sizeof *c->stamp);
        c->stamp_now = 0;
    }
    uint32_t m1 = ++c->stamp_now, m2 = ++c->stamp_now;
    memcpy(out, occ, c->P * sizeof *out);
    for (uint32_t i = 0; i < k; i++)
        mp_charge(c, assign, nodes[i], m1, -1, out);
    for (uint32_t i = 0; i < k; i++) {
        saved[i] = assign[nodes[i]];
        assign[nodes[i]] = to[i];
    }
    for (uint32_t i = 0; i < k; i++)
        mp_charge(c, assign, nodes[i], m2, 1, out);
    for (uint32_t i = k; i-- > 0;)
        assign[nodes[i]] = saved[i];
    c->moves++;
}

static bool mp_can(const mp_ctx *c, uint32_t v, uint32_t core)
{
    return c->t[(size_t)v * c->P + core] >= 0;
}

/* ---- local search on occupancy ------------------------------------------ */

typedef struct mp_work {
    uint32_t *assign;
    int64_t *occ, *tmp;
    uint32_t *nodes, *to, *saved; /* n entries each: a move being judged */
} mp_work;

/* The clock is read once per 1024 moves looked at.  A starting
 * assignment's descent also ends at its share of the time (c->share_end),
 * so that one slow descent leaves time for the others; that too makes the
 * result depend on the machine (c->cut). */
static bool mp_budget_left(mp_ctx *c)
{
    if (c->moves >= PM_MAPPER_MAX_MOVES || c->timed_out || c->share_over)
        return false;
    if (c->moves - c->moves_checked < 1024)
        return true;
    c->moves_checked = c->moves;
    struct timespec now;
    clock_gettime(CLOCK_MONOTONIC, &now);
    if (c->share_on && (now.tv_sec > c->share_end.tv_sec
                        || (now.tv_sec == c->share_end.tv_sec
                            && now.tv_nsec >= c->share_end.tv_nsec)))
        c->share_over = c->cut = true;
    return !c->share_over && !mp_out_of_time(c);
}

/* Give the next descent up to the end of share k of MP_SHARES of the
 * budget (k < 0: no share, only the budget). */
static void mp_share(mp_ctx *c, int k)
{
    c->share_on = k >= 0;
    c->share_over = false;
    if (!c->share_on)
        return;
    int64_t ns = (int64_t)c->budget_ms * 1000000 * (k + 1) / MP_SHARES;
    c->share_end = c->start;
    c->share_end.tv_sec += (time_t)(ns / 1000000000);
    c->share_end.tv_nsec += (long)(ns % 1000000000);
    if (c->share_end.tv_nsec >= 1000000000L) {
        c->share_end.tv_sec++;
        c->share_end.tv_nsec -= 1000000000L;
    }
}

/* Make the move of w->nodes[0..k) when it lowers the occupancy key. */
static bool mp_try(mp_ctx *c, mp_work *w, uint32_t k)
{
    mp_delta(c, w->assign, w->nodes, w->to, k, w->occ, w->tmp, w->saved);
    if (!mp_okey_less(mp_okey_of(w->tmp, c->P), mp_okey_of(w->occ, c->P)))
        return false;
    for (uint32_t i = 0; i < k; i++)
        w->assign[w->nodes[i]] = w->to[i];
    memcpy(w->occ, w->tmp, c->P * sizeof *w->occ);
    return true;
}

/* Move a whole loop (the part of v) from core a to another core. */
static bool mp_move_loop(mp_ctx *c, mp_work *w, uint32_t v, uint32_t a)
{
    const pm_scc *s = &c->scc;
    uint32_t part = s->comp[v], k = s->start[part + 1] - s->start[part];
    if (!c->looped[part] || k < 2 || s->order[s->start[part]] != v)
        return false;
    for (uint32_t b = 0; b < c->P; b++) {
        bool ok = b != a;
        for (uint32_t i = 0; i < k && ok; i++) {
            w->nodes[i] = s->order[s->start[part] + i];
            w->to[i] = b;
            ok = mp_can(c, w->nodes[i], b);
        }
        if (ok && mp_try(c, w, k))
            return true;
    }
    return false;
}

/* One improving move of a node (or its loop) off core a. */
static bool mp_move_one(mp_ctx *c, mp_work *w, uint32_t a)
{
    for (uint32_t v = 0; v < c->n && mp_budget_left(c); v++) {
        if (w->assign[v] != a)
            continue;
        for (uint32_t b = 0; b < c->P; b++) {
            w->nodes[0] = v;
            w->to[0] = b;
            if (b != a && mp_can(c, v, b) && mp_try(c, w, 1))
                return true;
        }
        if (c->has_loops && mp_move_loop(c, w, v, a))
            return true;
    }
    return false;
}

/* One improving exchange of a node of core a with a node elsewhere; on
 * graphs of more than MP_SWAP_ALL nodes only with the least busy core's
 * nodes, since trying every pair costs O(V^2 / P) per step. */
static bool mp_swap_one(mp_ctx *c, mp_work *w, uint32_t a)
{
    uint32_t lo = 0;
    for (uint32_t k = 1; k < c->P; k++)
        lo = w->occ[k] < w->occ[lo] ? k : lo;
    bool all = c->n <= MP_SWAP_ALL;
    for (uint32_t v = 0; v < c->n && mp_budget_left(c); v++) {
        if (w->assign[v] != a)
            continue;
        for (uint32_t u = 0; u < c->n && mp_budget_left(c); u++) {
            uint32_t b = w->assign[u];
            if (b == a || (!all && b != lo) || !mp_can(c, v, b) || !mp_can(c, u, a))
                continue;
            w->nodes[0] = v;
            w->to[0] = b;
            w->nodes[1] = u;
            w->to[1] = a;
            if (mp_try(c, w, 2))
                return true;
        }
    }
    return false;
}

/* Improve w->assign until no move or exchange off the busiest core helps. */
static void mp_improve(mp_ctx *c, mp_work *w)
{
    mp_occupancy(c, w->assign, w->occ);
    while (mp_budget_left(c)) {
        uint32_t a = 0;
        for (uint32_t k = 1; k < c->P; k++)
            a = w->occ[k] > w->occ[a] ? k : a;
        if (!mp_move_one(c, w, a) && !mp_swap_one(c, w, a))
            break;
    }
}

/* ---- starting assignments ----------------------------------------------- */

/* Sum of v's smallest cycles over the cores that may run it. */
static int64_t mp_min_t(const mp_ctx *c, uint32_t v)
{
    int64_t best = -1;
    for (uint32_t k = 0; k < c->P; k++) {
        int64_t t = c->t[(size_t)v * c->P + k];
        if (t >= 0 && (best < 0 || t < best))
            best = t;
    }
    return best;
}

typedef struct mp_unit {
    uint32_t first, len; /* nodes in units_nodes[first .. first + len) */
    int64_t weight;
} mp_unit;

static int mp_unit_cmp(const void *x, const void *y)
{
    const mp_unit *a = x, *b = y;
    if (a->weight != b->weight)
        return a->weight > b->weight ? -1 : 1;
    return (a->first > b->first) - (a->first < b->first);
}

/* Place unit u (its nodes in list) on the core that keeps the key lowest:
 * by_own - that core's new occupancy, then the total; else the busiest
 * new occupancy, then the total.  Ties: the lower core.  false when no
 * core may run the whole unit. */
static bool mp_place_unit(mp_ctx *c, mp_work *w, const uint32_t *list, uint32_t len,
                          bool by_own)
{
    uint32_t best = PM_NONE;
    int64_t b1 = 0, b2 = 0;
    for (uint32_t k = 0; k < c->P; k++) {
        bool ok = true;
        for (uint32_t i = 0; i < len && ok; i++) {
            w->nodes[i] = list[i];
            w->to[i] = k;
            ok = mp_can(c, list[i], k);
        }
        if (!ok)
            continue;
        mp_delta(c, w->assign, w->nodes, w->to, len, w->occ, w->tmp, w->saved);
        mp_okey key = mp_okey_of(w->tmp, c->P);
        int64_t k1 = by_own ? w->tmp[k] : key.top;
        if (best == PM_NONE || k1 < b1 || (k1 == b1 && key.sum < b2)) {
            best = k;
            b1 = k1;
            b2 = key.sum;
        }
    }
    if (best == PM_NONE)
        return false;
    for (uint32_t i = 0; i < len; i++)
        w->to[i] = best;
    mp_delta(c, w->assign, w->nodes, w->to, len, w->occ, w->tmp, w->saved);
    memcpy(w->occ, w->tmp, c->P * sizeof *w->occ);
    for (uint32_t i = 0; i < len; i++)
        w->assign[list[i]] = best;
    return true;
}

/* Total of the nodes' smallest cycles over P, at least the largest node:
 * the work a core may take before a loop is better split. */
static int64_t mp_target(const mp_ctx *c)
{
    int64_t sum = 0, big = 0;
    for (uint32_t v = 0; v < c->n; v++) {
        int64_t t = mp_min_t(c, v);
        sum += t;
        big = t > big ? t : big;
    }
    int64_t share = (sum + c->P - 1) / c->P;
    return share > big ? share : big;
}

/* The units to place: each loop whose work fits the target as one unit
 * (clusters) or every node alone; into units (n entries) and their nodes
 * into list (n entries).  The number of units. */
static uint32_t mp_units(const mp_ctx *c, bool clusters, mp_unit *units, uint32_t *list)
{
    const pm_scc *s = &c->scc;
    int64_t target = mp_target(c);
    uint32_t nu = 0, at = 0;
    for (uint32_t part = 0; part < s->ncomp; part++) {
        uint32_t a = s->start[part], b = s->start[part + 1];
        int64_t work = 0;
        for (uint32_t i = a; i < b; i++)
            work += mp_min_t(c, s->order[i]);
        bool whole = clusters && c->looped[part] && work <= target;
        for (uint32_t i = a; i < b; i++) {
            if (!whole || i == a)
                units[nu++] = (mp_unit){ at, 0, 0 };
            list[at++] = s->order[i];
            units[nu - 1].len++;
            units[nu - 1].weight += mp_min_t(c, s->order[i]);
        }
    }
    qsort(units, nu, sizeof *units, mp_unit_cmp);
    return nu;
}

/* Longest processing time first over the units, communication-aware
 * (mp_place_unit); a unit no core can take whole goes node by node. */
static int mp_lpt(mp_ctx *c, mp_work *w, bool clusters, bool by_own)
{
    mp_unit *units = malloc(((size_t)c->n + 1) * sizeof *units);
    uint32_t *list = malloc(((size_t)c->n + 1) * sizeof *list);
    if (!units || !list) {
        free(units);
        free(list);
        return PM_ENOMEM;
    }
    uint32_t nu = mp_units(c, clusters, units, list);
    for (uint32_t v = 0; v < c->n; v++)
        w->assign[v] = PM_NONE;
    memset(w->occ, 0, c->P * sizeof *w->occ);
    for (uint32_t i = 0; i < nu; i++) {
        const uint32_t *l = list + units[i].first;
        if (!mp_place_unit(c, w, l, units[i].len, by_own))
            for (uint32_t j = 0; j < units[i].len; j++)
                mp_place_unit(c, w, l + j, 1, by_own);
    }
    free(units);
    free(list);
    return PM_OK;
}

/* Cores filled in zero-delay order up to an equal share each: pipelines
 * cut into stages, few edges cross. */
static void mp_stages(mp_ctx *c, mp_work *w)
{
    int64_t share = (mp_target(c) * c->P + c->P - 1) / c->P, fill = 0;
    uint32_t k = 0;
    for (uint32_t i = 0; i < c->n; i++) {
        uint32_t v = c->topo[i];
        int64_t t = mp_min_t(c, v);
        if (fill > 0 && fill + t / 2 > share && k + 1 < c->P) {
            k++;
            fill = 0;
        }
        uint32_t core = k;
        for (uint32_t j = 0; j < c->P && !mp_can(c, v, core); j++)
            core = (k + j + 1) % c->P;
        w->assign[v] = core;
        if (core == k)
            fill += t;
    }
}

/* ---- the best map so far ------------------------------------------------ */

typedef struct mp_best {
    pm_map *map;
    mp_key key;
    uint32_t *assign;
} mp_best;

/* Evaluate assign exactly and keep it when it beats the best. */
static int mp_consider(mp_ctx *c, const uint32_t *assign, mp_best *best, bool *better,
                       pm_diag *diag)
{
    pm_map *m = NULL;
    mp_key key;
    *better = false;
    int rc = mp_evaluate(c, assign, &m, &key, diag);
    if (rc)
        return rc;
    if (best->map && mp_key_cmp(&key, &best->key) >= 0) {
        pm_map_destroy(m);
        return PM_OK;
    }
    pm_map_destroy(best->map);
    best->map = m;
    best->key = key;
    memcpy(best->assign, assign, c->n * sizeof *assign);
    *better = true;
    return PM_OK;
}

/* Improve w->assign on occupancy, then judge it exactly. */
static int mp_start(mp_ctx *c, mp_work *w, mp_best *best, pm_diag *diag)
{
    bool better;
    mp_improve(c, w);
    return mp_consider(c, w->assign, best, &better, diag);
}

/* First-improvement search on the exact period from the best map: single
 * moves, skipped when the busiest occupancy after them (a floor of the
 * period) already reaches the best period. */
static int mp_exact_search(mp_ctx *c, mp_work *w, mp_best *best, pm_diag *diag)
{
    bool again = true;
    int rc = PM_OK;
    while (again && rc == PM_OK) {
        again = false;
        memcpy(w->assign, best->assign, c->n * sizeof *w->assign);
        mp_occupancy(c, w->assign, w->occ);
        for (uint32_t v = 0; v < c->n && !again && rc == PM_OK; v++)
            for (uint32_t b = 0; b < c->P && !again && rc == PM_OK; b++) {
                if (c->evals >= c->max_evals || mp_out_of_time(c))
                    return PM_OK;
                if (b == w->assign[v] || !mp_can(c, v, b))
                    continue;
                w->nodes[0] = v;
                w->to[0] = b;
                mp_delta(c, w->assign, w->nodes, w->to, 1, w->occ, w->tmp, w->saved);
                if (pm_rat_cmp(pm_rat_int(mp_okey_of(w->tmp, c->P).top), best->key.period) >= 0)
                    continue;
                w->assign[v] = b;
                rc = mp_consider(c, w->assign, best, &again, diag);
                w->assign[v] = w->saved[0];
            }
    }
    return rc;
}

/* ---- perturbations ----------------------------------------------------- */

/* xorshift64*: a fixed sequence from a fixed seed, so that the search is
 * the same on every run and machine (until the time budget ends it). */
static uint32_t mp_rand(uint64_t *s, uint32_t n)
{
    *s ^= *s >> 12;
    *s ^= *s << 25;
    *s ^= *s >> 27;
    return (uint32_t)(((*s * 0x2545F4914F6CDD1DULL) >> 32) % n);
}

/* The work floor: no map runs faster than its busiest core's occupancy
 * (its round is a loop of one delay), which is a whole number of cycles
 * at least the heaviest node and the total work spread over all cores
 * (each node at its smallest cycles), rounded up. */
static pm_rat mp_work_floor(const mp_ctx *c)
{
    int64_t sum = 0, big = 0;
    for (uint32_t v = 0; v < c->n; v++) {
        int64_t t = mp_min_t(c, v);
        sum = sum > PM_MAX_VALUE - t ? PM_MAX_VALUE : sum + t;
        big = t > big ? t : big;
    }
    /* the busiest occupancy, a whole number, is at least the spread work */
    int64_t spread = sum / c->P + (sum % c->P != 0);
    return pm_rat_int(spread > big ? spread : big);
}

/* Move k random nodes of w->assign to random cores that may run them; a
 * node in a loop takes its whole loop along half of the time. */
static void mp_kick(mp_ctx *c, mp_work *w, uint64_t *seed, uint32_t k)
{
    const pm_scc *s = &c->scc;
    for (uint32_t i = 0; i < k; i++) {
        uint32_t v = mp_rand(seed, c->n), b = mp_rand(seed, c->P);
        uint32_t part = s->comp[v], whole = c->looped[part] && mp_rand(seed, 2);
        uint32_t lo = whole ? s->start[part] : 0, hi = whole ? s->start[part + 1] : 1;
        bool ok = true;
        for (uint32_t j = lo; j < hi && ok; j++)
            ok = mp_can(c, whole ? s->order[j] : v, b);
        for (uint32_t j = lo; j < hi && ok; j++)
            w->assign[whole ? s->order[j] : v] = b;
    }
}

/* Iterated local search from the best map: kick it, descend on occupancy,
 * judge exactly (and with loops or a bus, go on with the exact search
 * from a better map); stop after MP_STALE kicks in a row that found
 * nothing, at the work floor, or at a budget. */
static int mp_iterate(mp_ctx *c, mp_work *w, mp_best *best, pm_rat floor, pm_diag *diag)
{
    uint64_t seed = 0x9E3779B97F4A7C15ULL ^ ((uint64_t)c->n << 20) ^ c->P;
    uint32_t stale = 0, kick = c->n / 16 + 2;
    int rc = PM_OK;
    bool exact = c->has_loops || c->g->platform.interconnect == PM_BUS;
    while (rc == PM_OK && stale < MP_STALE && pm_rat_cmp(best->key.period, floor) > 0
           && c->evals < c->max_evals && !mp_out_of_time(c)) {
        memcpy(w->assign, best->assign, c->n * sizeof *w->assign);
        mp_kick(c, w, &seed, 1 + mp_rand(&seed, kick));
        mp_improve(c, w);
        bool better = false;
        rc = mp_consider(c, w->assign, best, &better, diag);
        if (rc == PM_OK && better && exact)
            rc = mp_exact_search(c, w, best, diag);
        stale = better ? 0 : stale + 1;
    }
    return rc;
}

/* The branch and bound where it is exact; *proven when it settles the
 * optimum and the best map reaches it. */
static int mp_exact_optimum(mp_ctx *c, const pm_mapper_opts *o, mp_best *best, bool *ran,
                            bool *proven, pm_diag *diag)
{
    *ran = *proven = false;
    if (o->no_exact || c->has_loops || c->g->platform.interconnect == PM_BUS
        || c->n > PM_MAPPER_EXACT_MAX_NODES || c->n == 0)
        return PM_OK;
    int64_t upper = pm_rat_ceil(best->key.period), opt = 0;
    if (upper <= 0) {
        *proven = true; /* nothing runs faster than a period of 0 */
        return PM_OK;
    }
    uint32_t *assign = malloc(c->n * sizeof *assign);
    if (!assign)
        return PM_ENOMEM;
    memcpy(assign, best->assign, c->n * sizeof *assign);
    bool done = false, better = false;
    int rc = pm_mapper_exact(c->g, o->exact_nodes, upper, assign, &opt, &done);
    if (rc == PM_EUNSUPPORTED) {
        free(assign);
        return PM_OK;
    }
    *ran = rc == PM_OK;
    if (rc == PM_OK && opt < upper)
        rc = mp_consider(c, assign, best, &better, diag);
    if (rc == PM_OK && done)
        *proven = pm_rat_cmp(best->key.period, pm_rat_int(opt)) == 0;
    free(assign);
    return rc;
}

/* ---- set-up and entry --------------------------------------------------- */

static void mp_ctx_free(mp_ctx *c)
{
    free(c->t);
    free(c->topo);
    free(c->topo_pos);
    free(c->looped);
    free(c->stamp);
    pm_scc_free(&c->scc);
}

/* Node times per core, the zero-delay order, the loops. */
static int mp_ctx_init(mp_ctx *c, const pm_graph *g, const pm_mapper_opts *o, pm_diag *diag)
{
    memset(c, 0, sizeof *c);
    c->g = g;
    c->n = g->nnodes;
    c->P = g->platform.ncores;
    c->send = g->platform.comm.send;
    c->recv = g->platform.comm.recv;
    c->max_evals = o->max_evals ? o->max_evals : PM_MAPPER_DEFAULT_EVALS;
    uint32_t ms = o->time_ms ? o->time_ms : PM_MAPPER_DEFAULT_MS;
    c->budget_ms = ms;
    clock_gettime(CLOCK_MONOTONIC, &c->start);
    c->deadline = c->start;
    c->deadline.tv_sec += (time_t)(ms / 1000);
    c->deadline.tv_nsec += (long)(ms % 1000) * 1000000L;
    if (c->deadline.tv_nsec >= 1000000000L) {
        c->deadline.tv_sec++;
        c->deadline.tv_nsec -= 1000000000L;
    }
    c->t = malloc(((size_t)c->n * c->P + 1) * sizeof *c->t);
    c->topo = malloc(((size_t)c->n + 1) * sizeof *c->topo);
    c->topo_pos = malloc(((size_t)c->n + 1) * sizeof *c->topo_pos);
    c->stamp = calloc((size_t)g->nedges + 1, sizeof *c->stamp);
    if (!c->t || !c->topo || !c->topo_pos || !c->stamp)
        return PM_ENOMEM;
    for (uint32_t v = 0; v < c->n; v++) {
        bool any = false;
        for (uint32_t k = 0; k < c->P; k++) {
            bool ok = pm_graph_can_run(g, v, k);
            c->t[(size_t)v * c->P + k] = ok ? pm_graph_cycles_on(g, v, g->platform.core_class[k]) : -1;
            any = any || ok;
        }
        if (!any) {
            pm_diag_set(diag, g->file, g->nodes[v].line, g->nodes[v].col,
                        "node '%s' can run on no core", pm_graph_node_name(g, v));
            return PM_EPLATFORM;
        }
    }
    return PM_OK;
}

/* The zero-delay order and the parts with loops. */
static int mp_ctx_order(mp_ctx *c, pm_diag *diag)
{
    uint32_t count = 0;
    int rc = pm_order_zero_delay(c->g, PM_ORDER_SMALLEST, c->topo, &count);
    if (rc == PM_OK && count < c->n)
        return pm_order_check_zero_delay(c->g, diag);
    if (rc == PM_OK)
        rc = pm_scc_compute(c->g, NULL, NULL, &c->scc);
    if (rc)
        return rc;
    for (uint32_t i = 0; i < c->n; i++)
        c->topo_pos[c->topo[i]] = i;
    c->looped = calloc((size_t)c->scc.ncomp + 1, 1);
    if (!c->looped)
        return PM_ENOMEM;
    for (uint32_t k = 0; k < c->scc.ncomp; k++) {
        c->looped[k] = pm_scc_has_cycle(c->g, &c->scc, k, NULL, NULL);
        c->has_loops = c->has_loops || c->looped[k];
    }
    return PM_OK;
}

/* The list schedule's assignment, as it is and improved. */
static int mp_from_list(mp_ctx *c, mp_work *w, mp_best *best, pm_diag *diag)
{
    pm_map *lm = NULL;
    bool better;
    int rc = pm_sched_list(c->g, NULL, NULL, &lm, diag);
    if (rc == PM_OK) {
        memcpy(w->assign, lm->core_of, c->n * sizeof *w->assign);
        rc = mp_consider(c, w->assign, best, &better, diag);
    }
    if (rc == PM_OK && !mp_out_of_time(c))
        rc = mp_start(c, w, best, diag);
    pm_map_destroy(lm);
    return rc;
}

/* Every starting assignment, improved and judged; then the exact search
 * for loops (or a bus), then the exact optimum. */
static int mp_search(mp_ctx *c, mp_work *w, const pm_mapper_opts *o, mp_best *best,
                     pm_mapper_info *info, pm_diag *diag)
{
    mp_share(c, 0);
    int rc = mp_from_list(c, w, best, diag);
    for (int k = 0; k < 4 && rc == PM_OK && !mp_out_of_time(c); k++) {
        mp_share(c, k + 1);
        if (k < 3)
            rc = mp_lpt(c, w, k != 2, k != 1);
        else
            mp_stages(c, w);
        if (rc == PM_OK)
            rc = mp_start(c, w, best, diag);
    }
    mp_share(c, -1);
    if (rc == PM_OK && (c->has_loops || c->g->platform.interconnect == PM_BUS))
        rc = mp_exact_search(c, w, best, diag);
    if (rc == PM_OK)
        rc = mp_exact_optimum(c, o, best, &info->exact_run, &info->proven, diag);
    pm_rat floor = mp_work_floor(c);
    if (rc == PM_OK && !info->proven)
        rc = mp_iterate(c, w, best, floor, diag);
    if (rc == PM_OK && pm_rat_cmp(best->key.period, floor) <= 0)
        info->proven = true;
    return rc;
}

static void mp_work_free(mp_work *w)
{
    free(w->assign);
    free(w->occ);
    free(w->tmp);
    free(w->nodes);
    free(w->to);
    free(w->saved);
}

static int mp_work_alloc(const mp_ctx *c, mp_work *w)
{
    size_t n = (size_t)c->n + 2;
    w->assign = malloc(n * sizeof *w->assign);
    w->occ = calloc((size_t)c->P + 1, sizeof *w->occ);
    w->tmp = calloc((size_t)c->P + 1, sizeof *w->tmp);
    w->nodes = malloc(n * sizeof *w->nodes);
    w->to = malloc(n * sizeof *w->to);
    w->saved = malloc(n * sizeof *w->saved);
    return w->assign && w->occ && w->tmp && w->nodes && w->to && w->saved ? PM_OK : PM_ENOMEM;
}

int pm_mapper_map(const pm_graph *g, const pm_mapper_opts *opts, pm_map **out,
                  pm_mapper_info *info, pm_diag *diag)
{
    static const pm_mapper_opts defaults = { 0 };
    pm_mapper_info local;
    pm_mapper_info *inf = info ? info : &local;
    memset(inf, 0, sizeof *inf);
    if (!out)
        return PM_EINVAL;
    *out = NULL;
    if (!g || !g->finalized)
        return PM_EINVAL;
    if (!pm_graph_is_single_rate(g))
        return PM_EUNSUPPORTED;
    const pm_mapper_opts *o = opts ? opts : &defaults;
    mp_ctx c;
    mp_work w = { 0 };
    mp_best best = { 0 };
    int rc = mp_ctx_init(&c, g, o, diag);
    if (rc == PM_OK)
        rc = mp_ctx_order(&c, diag);
    if (rc == PM_OK)
        rc = mp_work_alloc(&c, &w);
    best.assign = rc == PM_OK ? malloc(((size_t)c.n + 1) * sizeof *best.assign) : NULL;
    if (rc == PM_OK)
        rc = best.assign ? mp_search(&c, &w, o, &best, inf, diag) : PM_ENOMEM;
    if (rc == PM_OK) {
        mp_occupancy(&c, best.assign, w.occ);
        inf->busiest = mp_okey_of(w.occ, c.P).top;
        inf->period = best.key.period;
        *out = best.map;
        best.map = NULL;
    }
    inf->evals = c.evals;
    inf->timed_out = c.timed_out || c.cut;
    pm_map_destroy(best.map);
    free(best.assign);
    mp_work_free(&w);
    mp_ctx_free(&c);
    return rc;
}
