/*
 * sim_pace.c - paced runs of the simulator: the input delivers a sample
 * every I cycles and no firing works on a sample before it exists
 * (docs/simulation.md, "Paced runs").
 *
 * Here: the per-node facts a paced run needs (firings per iteration, which
 * firing, input, sink), the release of a firing, what each firing adds to
 * latency and overruns, and the summary (min, mean, p99, max latency).
 * The causal engine (sim_causal.c) gates each firing at its release; the
 * compiled pass never runs paced.  Nothing here prints.
 */
#include <stdlib.h>
#include <string.h>

#include "sim_internal.h"

/* splitmix64's output function (Steele, Lea & Flood, OOPSLA 2014): a
 * well-spread, repeatable lateness from a release time and a seed. */
static uint64_t sim_pace_mix(uint64_t z)
{
    z = (z ^ (z >> 30)) * UINT64_C(0xbf58476d1ce4e5b9);
    z = (z ^ (z >> 27)) * UINT64_C(0x94d049bb133111eb);
    return z ^ (z >> 31);
}

int64_t pm_sim_release(const pm_sim_pace *p, uint64_t j, uint32_t q)
{
    pm_u128 num = (pm_u128)j * (uint64_t)p->interval.num;
    pm_u128 den = (pm_u128)(q ? q : 1) * (uint64_t)p->interval.den;
    int64_t t = (int64_t)((num + den - 1) / den);
    if (p->jitter <= 0)
        return t;
    uint64_t z = sim_pace_mix(p->seed + (uint64_t)t * UINT64_C(0x9e3779b97f4a7c15));
    return t + (int64_t)(z % ((uint64_t)p->jitter + 1));
}

/* Inputs and sinks by the graph when the caller gave none. */
static void sim_pace_roles(sim *s, const pm_sim_pace *p)
{
    const pm_graph *g = s->g;
    for (uint32_t v = 0; v < s->n; v++)
        s->pin[v] = true, s->psink[v] = true;
    bool any_sink = false;
    for (uint32_t e = 0; e < g->nedges; e++)
        if (g->edges[e].src != g->edges[e].dst) /* self-loops aside */
            s->pin[g->edges[e].dst] = false, s->psink[g->edges[e].src] = false;
    for (uint32_t v = 0; v < s->n; v++) {
        s->pin[v] = p->input ? p->input[v] : s->pin[v];
        s->psink[v] = p->sink ? p->sink[v] : s->psink[v];
        any_sink |= s->psink[v];
    }
    for (uint32_t v = 0; !any_sink && v < s->n; v++)
        s->psink[v] = true;
}

/* Times must stay within 62 bits: the last release is about N * I. */
static int sim_pace_check(const sim *s, const pm_sim_pace *p, pm_diag *diag)
{
    if (p->interval.num <= 0 || p->interval.den <= 0 || p->jitter < 0) {
        pm_diag_set(diag, s->g->file, 0, 0, "a paced run needs an interval above 0");
        return PM_EINVAL;
    }
    pm_u128 last = ((pm_u128)s->R + 2) * (uint64_t)p->interval.num / (uint64_t)p->interval.den;
    if (last + (uint64_t)p->jitter > (pm_u128)PM_MAX_VALUE / 4) {
        pm_diag_set(diag, s->g->file, 0, 0, "releases of %llu iterations would overflow",
                    (unsigned long long)s->N);
        return PM_ERANGE;
    }
    return PM_OK;
}

int sim_pace_init(sim *s, const pm_sim_opts *o, pm_diag *diag)
{
    const pm_sim_pace *p = o->pace;
    int rc = sim_pace_check(s, p, diag);
    if (rc)
        return rc;
    s->pace = p;
    s->pq = malloc((s->n + 1) * sizeof *s->pq);
    s->pph = malloc((s->n + 1) * sizeof *s->pph);
    s->pin = malloc((s->n + 1) * sizeof *s->pin);
    s->psink = malloc((s->n + 1) * sizeof *s->psink);
    s->sink_end = malloc(s->N * sizeof *s->sink_end);
    if (!s->pq || !s->pph || !s->pin || !s->psink || !s->sink_end)
        return PM_ENOMEM;
    for (uint32_t v = 0; v < s->n; v++) {
        s->pq[v] = p->count && p->count[v] ? p->count[v] : 1;
        s->pph[v] = p->phase ? p->phase[v] : 0;
        if (s->pph[v] >= s->pq[v]) {
            pm_diag_set(diag, s->g->file, 0, 0, "pace: firing %u of node '%s' out of %u",
                        s->pph[v], pm_graph_node_name(s->g, v), s->pq[v]);
            return PM_EINVAL;
        }
    }
    for (uint64_t k = 0; k < s->N; k++)
        s->sink_end[k] = INT64_MIN;
    sim_pace_roles(s, p);
    return PM_OK;
}

void sim_pace_free(sim *s)
{
    free(s->pq), free(s->pph), free(s->pin), free(s->psink), free(s->sink_end);
    s->pq = s->pph = NULL, s->pin = s->psink = NULL, s->sink_end = NULL;
}

int64_t sim_pace_release(const sim *s, uint32_t v, uint64_t k)
{
    return pm_sim_release(s->pace, k * s->pq[v] + s->pph[v], s->pq[v]);
}

void sim_pace_note(sim *s, uint32_t v, uint64_t k, int64_t x)
{
    if (k >= s->N)
        return;
    if (s->psink[v]) {
        int64_t end = x + s->nd[v].end_off;
        if (end > s->sink_end[k])
            s->sink_end[k] = end;
    }
    if (s->pin[v] && x >= pm_sim_release(s->pace, k * s->pq[v] + s->pph[v] + 1, s->pq[v])) {
        if (s->overruns++ == 0 || k < s->first_overrun)
            s->first_overrun = k;
    }
}

static int sim_pace_cmp(const void *a, const void *b)
{
    int64_t x = *(const int64_t *)a, y = *(const int64_t *)b;
    return (x > y) - (x < y);
}

/* Releases of the recorded iterations, for the charts. */
static int sim_pace_releases(const sim *s, pm_sim_result *r)
{
    uint32_t n = r->recorded;
    if (n == 0)
        return PM_OK;
    r->pace.releases = malloc(n * sizeof *r->pace.releases);
    if (!r->pace.releases)
        return PM_ENOMEM;
    for (uint32_t k = 0; k < n; k++)
        r->pace.releases[k] = pm_sim_release(s->pace, k, 1);
    r->pace.nreleases = n;
    return PM_OK;
}

int sim_pace_report(const sim *s, pm_sim_result *r)
{
    int64_t *lat = malloc(s->N * sizeof *lat);
    if (!lat)
        return PM_ENOMEM;
    double sum = 0;
    for (uint64_t k = 0; k < s->N; k++) {
        lat[k] = s->sink_end[k] - pm_sim_release(s->pace, k, 1);
        sum += (double)lat[k];
    }
    qsort(lat, s->N, sizeof *lat, sim_pace_cmp);
    pm_sim_paced *p = &r->pace;
    p->on = true;
    p->latency_min = lat[0];
    p->latency_max = lat[s->N - 1];
    p->latency_p99 = lat[(s->N * 99 + 99) / 100 - 1]; /* nearest rank: ceil(0.99 N) */
    p->latency_mean = sum / (double)s->N;
    p->overruns = s->overruns;
    p->first_overrun = s->first_overrun;
    free(lat);
    return sim_pace_releases(s, r);
}
