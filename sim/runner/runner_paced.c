/*
 * runner_paced.c - paced runs on real cores (runner.h, cfg->pace): every
 * firing of iteration k waits for the host-time equivalent of its release,
 * ceil(k * I) cycles (plus the pace's jitter) times ns_per_cycle after the
 * run's start, as the simulator's paced runs do (docs/simulation.md); then
 * the latency of each measured iteration (release to the last sink end)
 * and the overruns (a source firing that starts at or after the next
 * release), and the simulator's prediction of both with measured node
 * times.  Not here: the threads and rings (runner_exec.c), the unpaced
 * statistics (runner.c).  No printing.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "runner_internal.h"

int64_t runner_release_ns(const runner_ctx *x, uint32_t v, uint64_t k)
{
    const pm_sim_pace *p = x->cfg->pace;
    uint32_t q = v != PM_NONE && p->count ? p->count[v] : 1;
    uint32_t i = v != PM_NONE && p->phase ? p->phase[v] : 0;
    double ns = (double)pm_sim_release(p, k * q + i, q) * x->cfg->ns_per_cycle;
    return ns >= 9e18 ? INT64_MAX : (int64_t)llround(ns);
}

void runner_pace_wait(runner_thread *th, uint32_t v, uint64_t k)
{
    runner_ctx *x = th->x;
    int64_t at = x->t0 + runner_release_ns(x, v, k);
    for (uint64_t spins = 0; runner_clock(x->cfg) < at; spins++) {
        if (atomic_load_explicit(&x->stop, memory_order_relaxed))
            return;
        runner_wait_turn(x->cfg, spins);
    }
}

/* Latency of each measured iteration into tmp; the overruns of sources. */
static uint32_t runner_paced_samples(const runner_ctx *x, double *tmp, uint64_t *overruns)
{
    uint32_t n = x->g->nnodes, cnt = 0;
    *overruns = 0;
    const pm_sim_pace *p = x->cfg->pace;
    for (uint32_t k = x->cfg->warmup; k < x->total; k++) {
        int64_t rel = runner_release_ns(x, PM_NONE, k), last = INT64_MIN;
        for (uint32_t v = 0; v < n; v++) {
            size_t at = runner_rec(x, k, v);
            if (x->sink_slot[v] != PM_NONE && x->end[at] > last)
                last = x->end[at];
            bool input = p->input ? p->input[v] : x->is_source[v];
            /* the release of v's next firing: one more firing number */
            uint32_t q = p->count ? p->count[v] : 1, i = p->phase ? p->phase[v] : 0;
            double next = (double)pm_sim_release(p, (uint64_t)k * q + i + 1, q) *
                          x->cfg->ns_per_cycle;
            *overruns += input && (double)x->start[at] >= next;
        }
        tmp[cnt++] = (double)(last - rel);
    }
    return cnt;
}

int runner_paced_collect(runner_ctx *x)
{
    pm_runner_result *r = x->r;
    double *tmp = malloc(((size_t)x->total + 1) * sizeof *tmp);
    if (!tmp)
        return PM_ENOMEM;
    uint32_t cnt = runner_paced_samples(x, tmp, &r->overruns);
    r->paced = true;
    r->paced_latency_ns_max = runner_quantile(tmp, cnt, 1.0);
    r->paced_latency_ns_min = tmp[0];
    r->paced_latency_ns_median = runner_quantile(tmp, cnt, 0.5);
    r->paced_latency_ns_p99 = runner_quantile(tmp, cnt, 0.99);
    free(tmp);
    return PM_OK;
}

int pm_runner_predict_paced(const pm_graph *g, const pm_map *m, const double *node_ns,
                            double handoff_ns, const pm_sim_pace *pace, double ns_per_cycle,
                            pm_runner_paced_model *out, pm_diag *diag)
{
    /* the prediction's time unit (1/16 ns, as in pm_runner_predict):
     * cycles of the pace become ns_per_cycle * 16 units each */
    double scale = ns_per_cycle * 16.0;
    double num = (double)pace->interval.num * scale;
    if (!(num >= 1.0 && num < 1e15))
        return PM_ERANGE;
    pm_sim_pace p = *pace;
    p.interval.num = (int64_t)llround(num);
    p.jitter = 0; /* run --paced has no jitter */
    int64_t *t = malloc((g->nnodes ? g->nnodes : 1) * sizeof *t);
    if (!t)
        return PM_ENOMEM;
    for (uint32_t v = 0; v < g->nnodes; v++)
        t[v] = (int64_t)llround(node_ns[v] * 16.0);
    pm_graph host = *g; /* a borrowed, read-only view, as pm_runner_predict's */
    host.platform.comm = (pm_comm){ .latency = (int64_t)llround(handoff_ns * 16.0) };
    host.platform.interconnect = PM_P2P;
    pm_sim_opts o = { .iterations = 1000, .node_cycles = t, .pace = &p };
    pm_sim_result r;
    int rc = pm_sim_run(&host, m, &o, &r, diag);
    if (rc == PM_OK) {
        out->latency_ns_min = (double)r.pace.latency_min / 16.0;
        out->latency_ns_p99 = (double)r.pace.latency_p99 / 16.0;
        out->latency_ns_max = (double)r.pace.latency_max / 16.0;
        out->overruns = r.pace.overruns;
    }
    pm_sim_result_free(&r);
    free(t);
    return rc;
}
