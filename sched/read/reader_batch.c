/*
 * reader_batch.c - storing the node and edge lines of a scenario in batches.
 *
 * The parse functions (reader_stmt.c) check each `node` and `edge` line and
 * keep it pending; here a batch of pending lines has all its names looked up
 * at once with pm_graph_find_many(), whose memory loads overlap, and is then
 * stored in file order.  On a graph of millions of nodes this is what makes
 * reading fast: one lookup at a time waits for main memory at every name.
 * The first error in file order is reported, as if each line had been
 * stored as soon as it was read.
 */
#include "reader_internal.h"

#include "pacemap/reader.h"

#include <stdlib.h>

static int rd_pin_record(reader_state *st, uint32_t v, const reader_node_line *n)
{
    reader_pin *p = st->pins;
    if (st->npins == st->pins_cap) {
        st->pins_cap = st->pins_cap ? 2 * st->pins_cap : 16;
        p = realloc(st->pins, st->pins_cap * sizeof *p);
    }
    if (!p)
        return reader_fail(st, PM_ENOMEM, n->pin_col, "out of memory");
    st->pins = p;
    p[st->npins++] = (reader_pin){ v, n->lineno, n->pin_col, n->pin_core };
    return PM_OK;
}

/* Store node line i as node v of the graph, with everything its line said. */
static int rd_node_store(reader_state *st, size_t i, uint32_t v)
{
    const reader_node_line *n = &st->nlines[i];
    if (n->per_class &&
        pm_graph_set_class_cycles(st->g, v, st->rows + i * READER_MAX_CLASSES) != PM_OK)
        return reader_fail(st, PM_ENOMEM, n->col, "out of memory");
    if (n->pin_core >= 0 && rd_pin_record(st, v, n))
        return st->rc;
    pm_node *nd = &st->g->nodes[v];
    nd->line = n->lineno;
    nd->col = n->col;
    nd->pin_core = n->pin_core >= 0 && n->pin_core < READER_MAX_CORES ? (uint32_t)n->pin_core
                                                                        : PM_NONE;
    nd->pin_class = n->pin_class;
    nd->work = n->work;
    nd->work_param = n->work_param;
    return PM_OK;
}

/* Node line i: new name, within the limit, then stored (if complete). */
static int rd_node_add(reader_state *st, size_t i)
{
    const reader_node_line *n = &st->nlines[i];
    const char *name = st->ref_text[i];
    size_t len = st->ref_len[i];
    uint32_t old = st->ref_id[i], v;
    if (old == PM_NONE) /* a duplicate within this batch is only seen now */
        old = pm_graph_find(st->g, name, len);
    if (old != PM_NONE)
        return reader_fail(st, PM_ENAME, n->col, "duplicate node '%.*s' (first declared on "
                           "line %u)", (int)len, name, st->g->nodes[old].line);
    if (st->g->nnodes >= st->lim.max_nodes)
        return reader_fail(st, PM_ELIMIT, n->col, "too many nodes (at most %u)",
                           st->lim.max_nodes);
    if (!n->complete)
        return PM_OK;
    int rc = pm_graph_add_node(st->g, name, len, n->per_class ? 0 : n->cycles, &v);
    if (rc)
        return reader_fail(st, rc, n->col, rc == PM_ELIMIT ? "node names are too long in total"
                                                           : "out of memory");
    return rd_node_store(st, i, v);
}

int reader_flush_nodes(reader_state *st)
{
    pm_graph_find_many(st->g, st->ref_text, st->ref_len, st->nrefs, st->ref_id);
    uint32_t line = st->lineno;
    for (size_t i = 0; i < st->nnlines && st->rc == PM_OK; i++) {
        st->lineno = st->nlines[i].lineno;
        rd_node_add(st, i);
    }
    st->lineno = line;
    st->nrefs = st->nnlines = 0;
    return st->rc;
}

/* The edges of one pending line, its names known. */
static int rd_edge_add(reader_state *st, const reader_edge_line *el)
{
    pm_edge e = el->attrs;
    for (uint32_t i = el->first; i + 1 < el->first + el->count; i++) {
        if (st->g->nedges >= st->lim.max_edges)
            return reader_fail(st, PM_ELIMIT, st->ref_col[i], "too many edges (at most %u)",
                               st->lim.max_edges);
        e.src = st->ref_id[i];
        e.dst = st->ref_id[i + 1];
        e.line = el->lineno;
        e.col = st->ref_col[i];
        if (pm_graph_add_edge(st->g, &e, NULL))
            return reader_fail(st, PM_ENOMEM, e.col, "out of memory");
    }
    return PM_OK;
}

/* Edge reference i names no node: say so, with the nearest declared name. */
static int rd_unknown_node(reader_state *st, uint32_t i)
{
    uint32_t near = pm_graph_suggest_node(st->g, st->ref_text[i], st->ref_len[i]);
    if (near != PM_NONE)
        return reader_fail(st, PM_ENAME, st->ref_col[i], "unknown node '%.*s' (did you mean "
                           "'%s'? nodes are declared with 'node' before an edge names them)",
                           (int)st->ref_len[i], st->ref_text[i],
                           pm_graph_node_name(st->g, near));
    return reader_fail(st, PM_ENAME, st->ref_col[i], "unknown node '%.*s' "
                       "(declare it with 'node' before this edge)",
                       (int)st->ref_len[i], st->ref_text[i]);
}

int reader_flush_edges(reader_state *st)
{
    pm_graph_find_many(st->g, st->ref_text, st->ref_len, st->nrefs, st->ref_id);
    uint32_t line = st->lineno;
    for (size_t l = 0; l < st->nelines && st->rc == PM_OK; l++) {
        const reader_edge_line *el = &st->elines[l];
        st->lineno = el->lineno;
        for (uint32_t i = el->first; i < el->first + el->count; i++)
            if (st->ref_id[i] == PM_NONE)
                return rd_unknown_node(st, i);
        if (el->complete)
            rd_edge_add(st, el);
    }
    st->lineno = line;
    st->nrefs = st->nelines = 0;
    return st->rc;
}


int reader_flush(reader_state *st)
{
    if (st->nnlines)
        return reader_flush_nodes(st);
    if (st->nelines)
        return reader_flush_edges(st);
    return st->rc;
}
