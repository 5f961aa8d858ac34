/*
 * gen_graph.c - deterministic benchmark graphs for `make bench`, written
 * both as a scenario (.pace) and as the plain edge list of bgl_mcr.
 *
 *   gen_graph random N M SEED OUT.pace OUT.edges
 *       N nodes (times 1..100), M random edges; forward edges carry 0..3
 *       delays, backward edges and self-loops 1..3 (no loop without delay).
 *   gen_graph chain N SEED OUT.pace OUT.edges
 *       a filter chain of N nodes: direct-form-I biquad sections (each node
 *       reads x[n], x[n-1], x[n-2] of the previous section: three edges
 *       with 0, 1, 2 delays; and keeps y[n-1], y[n-2]: self-loops with 1
 *       and 2 delays), every 8th node a mixer with one input and an
 *       oscillator state self-loop, and 4 long tracking loops, each from a
 *       node back 100,000 nodes upstream with 8 delays.
 *
 * Invented for benchmarking; not a real design.  Same arguments, same bytes.
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "bound_gen.h"

typedef struct gen_out {
    FILE *pace, *edges;
    unsigned long long nedges;
} gen_out;

static void gen_emit(gen_out *o, uint32_t u, uint32_t v, uint32_t tu, uint32_t d)
{
    if (d)
        fprintf(o->pace, "edge n%u -> n%u delay=%u\n", u, v, d);
    else
        fprintf(o->pace, "edge n%u -> n%u\n", u, v);
    fprintf(o->edges, "%u %u %u %u\n", u, v, tu, d);
    o->nedges++;
}

static void gen_random(gen_out *o, uint32_t n, uint32_t m, uint64_t seed, uint32_t *t)
{
    uint64_t r = seed;
    for (uint32_t v = 0; v < n; v++)
        t[v] = 1 + tk_rand(&r, 100);
    for (uint32_t v = 0; v < n; v++)
        fprintf(o->pace, "node n%u cycles=%u\n", v, t[v]);
    for (uint32_t i = 0; i < m; i++) {
        uint32_t u, v;
        int64_t d;
        gen_edge(&r, n, 3, &u, &v, &d);
        gen_emit(o, u, v, t[u], (uint32_t)d);
    }
}

#define CHAIN_SPAN 100000u
#define CHAIN_LOOPS 4u

static void gen_chain(gen_out *o, uint32_t n, uint64_t seed, uint32_t *t)
{
    uint64_t r = seed;
    for (uint32_t v = 0; v < n; v++)
        t[v] = v % 8 == 7 ? 6 + tk_rand(&r, 6) : 18 + tk_rand(&r, 12);
    for (uint32_t v = 0; v < n; v++)
        fprintf(o->pace, "node n%u cycles=%u\n", v, t[v]);
    for (uint32_t v = 0; v < n; v++) {
        if (v > 0) {
            gen_emit(o, v - 1, v, t[v - 1], 0);
            if (v % 8 != 7) {
                gen_emit(o, v - 1, v, t[v - 1], 1);
                gen_emit(o, v - 1, v, t[v - 1], 2);
            }
        }
        gen_emit(o, v, v, t[v], 1);
        if (v % 8 != 7)
            gen_emit(o, v, v, t[v], 2);
    }
    uint32_t step = n / (CHAIN_LOOPS + 1);
    for (uint32_t k = 1; k <= CHAIN_LOOPS && n > CHAIN_SPAN; k++) {
        uint32_t from = step * k + CHAIN_SPAN / 2;
        if (from >= n)
            from = n - 1;
        gen_emit(o, from, from - CHAIN_SPAN / 2 * 2 + 1, t[from], 8);
    }
}

int main(int argc, char **argv)
{
    bool random = argc == 7 && strcmp(argv[1], "random") == 0;
    bool chain = argc == 6 && strcmp(argv[1], "chain") == 0;
    if (!random && !chain) {
        fprintf(stderr, "usage: gen_graph random N M SEED OUT.pace OUT.edges\n"
                        "       gen_graph chain N SEED OUT.pace OUT.edges\n");
        return 2;
    }
    uint32_t n = (uint32_t)strtoul(argv[2], NULL, 10);
    uint32_t *t = malloc(((size_t)n + 1) * sizeof *t);
    gen_out o = { fopen(argv[argc - 2], "w"), NULL, 0 };
    FILE *tmp = tmpfile(); /* edges first, header line needs the count */
    o.edges = tmp;
    if (!t || !o.pace || !tmp || n < 2) {
        fprintf(stderr, "gen_graph: cannot start (N >= 2, writable files)\n");
        return 1;
    }
    fprintf(o.pace, "# invented benchmark graph: gen_graph %s\n", argv[1]);
    if (random)
        gen_random(&o, n, (uint32_t)strtoul(argv[3], NULL, 10),
                   strtoull(argv[4], NULL, 10), t);
    else
        gen_chain(&o, n, strtoull(argv[3], NULL, 10), t);
    FILE *ef = fopen(argv[argc - 1], "w");
    if (!ef)
        return 1;
    fprintf(ef, "graph %u %llu\n", n, o.nedges);
    rewind(tmp);
    char buf[1 << 16];
    size_t k;
    while ((k = fread(buf, 1, sizeof buf, tmp)) > 0)
        fwrite(buf, 1, k, ef);
    int bad = ferror(o.pace) || ferror(ef);
    fclose(tmp);
    bad |= fclose(o.pace) | fclose(ef);
    free(t);
    return bad ? 1 : 0;
}
