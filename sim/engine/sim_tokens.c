/*
 * sim_tokens.c - the most tokens each cross-core edge holds, for both
 * engines of the simulator.
 *
 * An edge with d delays gets pushes at E_j (producer ends) and pops at B_j
 * (consumer begins), both non-decreasing, and a pop goes before a push of
 * the same cycle.  After push j the edge holds d + j + 1 - #{pops at or
 * before E_j}.  Pops after B_{j+d} come no earlier than E_{j+1} plus the
 * transfer, later than E_j as long as the producer's occupancy plus the
 * transfer is positive; so when the consumer begins iteration k = j + d,
 * every pop that counts for push j is known, and so is E_j.  A cursor of
 * pops counted then walks the consumer's begin times in the ring
 * (sim_cursor_push).
 *
 * Two cases take the merge queue of sim_occ instead, which gives the same
 * counts whatever order the two sides arrive in, as long as each side
 * comes in time order: an edge whose producer has zero occupancy and a
 * free transfer (its pops may tie later pushes), from the start; and an
 * edge that holds so many tokens that the cursor would fall out of the
 * ring, from then on.
 */
#include <stdlib.h>
#include <string.h>

#include "sim_internal.h"

int sim_tokens_init(sim *s)
{
    s->cur = sim_alloc_big(((size_t)s->nx + 1) * sizeof *s->cur);
    if (!s->cur)
        return PM_ENOMEM;
    memset(s->cur, 0, ((size_t)s->nx + 1) * sizeof *s->cur);
    for (uint32_t i = 0; i < s->nx; i++) {
        const sim_x *x = &s->x[i];
        s->cur[i].max = x->delay;
        if (x->cost + s->nd[x->src].free_off <= 0)
            s->cur[i].q = SIM_QUEUED;
    }
    return PM_OK;
}

int sim_tokens_to_queue(sim *s, sim_cursor *t, uint32_t xs, const int64_t *col, size_t stride,
                        uint64_t k)
{
    sim_occ *o = &s->occ[xs];
    o->occ = (int64_t)(k + 1 - t->q);
    o->max = t->max;
    for (uint64_t j = t->q; j <= k; j++) {
        int rc = sim_occ_queue(o, col[(size_t)(j & s->mask) * stride], true);
        if (rc)
            return rc;
    }
    t->q = SIM_QUEUED;
    return PM_OK;
}

int sim_tokens_queued(sim *s, uint32_t xs, uint64_t k, int64_t begin, int64_t push)
{
    sim_occ *o = &s->occ[xs];
    int rc = sim_occ_pop(o, begin);
    if (!rc && k >= (uint64_t)s->x[xs].delay)
        rc = sim_occ_push(o, push);
    return rc;
}

int sim_tokens_tail(sim *s)
{
    for (uint32_t i = 0; i < s->nx; i++) {
        sim_cursor *t = &s->cur[i];
        const sim_x *x = &s->x[i];
        uint64_t d = (uint64_t)x->delay;
        for (uint64_t k = s->N > d ? s->N : d; k < s->N + d; k++) {
            int64_t push = *sim_x_at(s, x->src, k - d) + s->nd[x->src].end_off;
            if (t->q == SIM_QUEUED) {
                int rc = sim_occ_push(&s->occ[i], push);
                if (rc)
                    return rc;
                continue;
            }
            while (t->q < s->N && *sim_x_at(s, x->dst, t->q) <= push)
                t->q++;
            if ((int64_t)(k + 1 - t->q) > t->max)
                t->max = (int64_t)(k + 1 - t->q);
        }
        if (t->q != SIM_QUEUED)
            s->occ[i].max = t->max; /* sim_collect flushes the queued ones */
    }
    return PM_OK;
}
