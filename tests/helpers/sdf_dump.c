/*
 * sdf_dump.c - test helper: read a scenario, print its graph, repetition
 * vector and single-rate expansion as plain lines, for scripts that check
 * them against an independent computation (tests/check_sdf_demo.sh).
 *
 * Output:  node NAME CYCLES / edge SRC DST PRODUCE CONSUME DELAY WORDS
 *          rep NAME Q / xnode NAME CYCLES / xedge SRC DST DELAY WORDS
 * Exit 0 ok, 1 the library refused the input, 2 usage.
 */
#include <stdio.h>
#include <stdlib.h>

#include "pacemap/reader.h"
#include "pacemap/sdf.h"

static void dump_graph(const pm_graph *g, const char *node_tag, const char *edge_tag,
                       int rates)
{
    for (uint32_t v = 0; v < g->nnodes; v++)
        printf("%s %s %lld\n", node_tag, pm_graph_node_name(g, v),
               (long long)pm_graph_min_cycles(g, v));
    for (uint32_t e = 0; e < g->nedges; e++) {
        const pm_edge *pe = &g->edges[e];
        printf("%s %s %s", edge_tag, pm_graph_node_name(g, pe->src),
               pm_graph_node_name(g, pe->dst));
        if (rates)
            printf(" %lld %lld", (long long)pe->produce, (long long)pe->consume);
        printf(" %lld %lld\n", (long long)pe->delay, (long long)pe->words);
    }
}

int main(int argc, char **argv)
{
    if (argc != 2) {
        fprintf(stderr, "usage: sdf_dump FILE\n");
        return 2;
    }
    pm_graph *g = NULL, *x = NULL;
    uint64_t *rep = NULL;
    pm_diag d;
    int rc = pm_reader_read_file(argv[1], &g, &d);
    if (rc == PM_OK)
        rc = pm_sdf_single_rate(g, &x, &rep, NULL, &d);
    if (rc != PM_OK) {
        fprintf(stderr, "%s:%u:%u: error: %s\n", d.file, d.line, d.col, d.msg);
        pm_graph_destroy(g);
        return 1;
    }
    dump_graph(g, "node", "edge", 1);
    for (uint32_t v = 0; v < g->nnodes; v++)
        printf("rep %s %llu\n", pm_graph_node_name(g, v), (unsigned long long)rep[v]);
    dump_graph(x, "xnode", "xedge", 0);
    free(rep);
    pm_graph_destroy(x);
    pm_graph_destroy(g);
    return 0;
}
