/*
 * json.h - a small streaming JSON writer for machine output (--json).
 *
 * The writer tracks nesting and commas so callers only say what comes next.
 * Output is deterministic: keys in the order written, integers exact,
 * doubles with %.17g (or null when not finite).  Strings are escaped per
 * RFC 8259.  The writer borrows the stream; nothing to free.
 */
#ifndef PACEMAP_JSON_H
#define PACEMAP_JSON_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>

#include "pacemap/graph.h"
#include "pacemap/rational.h"

#define PM_JSON_MAX_DEPTH 32

typedef struct pm_json {
    FILE *out;
    int depth;
    bool first[PM_JSON_MAX_DEPTH]; /* nothing written yet at this level */
    bool after_key;
    int indent;                    /* spaces per level; 0 = compact */
} pm_json;

void pm_json_init(pm_json *j, FILE *out, int indent);
void pm_json_object_begin(pm_json *j);
void pm_json_object_end(pm_json *j);
void pm_json_array_begin(pm_json *j);
void pm_json_array_end(pm_json *j);
void pm_json_key(pm_json *j, const char *key);
void pm_json_string(pm_json *j, const char *s);
void pm_json_int(pm_json *j, int64_t v);
void pm_json_uint(pm_json *j, uint64_t v);
void pm_json_double(pm_json *j, double v);
void pm_json_bool(pm_json *j, bool v);
void pm_json_null(pm_json *j);
/* {"num": N, "den": D, "value": X} (docs/schema.json, "rational") */
void pm_json_rat(pm_json *j, pm_rat r);
/* Ends the document with a newline. */
void pm_json_finish(pm_json *j);

/* The node names of a graph, quoted and escaped once, side by side in one
 * buffer: a document that names a million nodes (a schedule, its
 * transfers) then writes each name as one copy, without escaping it again
 * or reaching into the graph's node records.  Set up by
 * pm_json_names_init (PM_OK, or PM_ENOMEM with *t zeroed), released by
 * pm_json_names_free; it does not keep the graph. */
typedef struct pm_json_names {
    char *text;   /* every name as a JSON string, one after another */
    size_t *off;  /* name v is text[off[v] .. off[v+1]) */
    uint32_t n;
} pm_json_names;

int pm_json_names_init(pm_json_names *t, const pm_graph *g);
void pm_json_names_free(pm_json_names *t);

/* The name of node v (v < t->n) as a string value. */
void pm_json_name(pm_json *j, const pm_json_names *t, uint32_t v);

#endif
