/*
 * reader_internal.h - what the scenario reader's lexer (lexer.c) and parser
 * (reader.c, reader_stmt.c) share.  Not installed, not a public API.
 *
 * The reader works one line at a time: the driver (reader.c) cuts the text
 * into lines, the lexer turns the current line into tokens on demand, and one
 * parse function per statement (reader_stmt.c) consumes them.  Tokens point
 * into the line; nothing is allocated per token.  The first error stops the
 * read: it is recorded in the state (code + pm_diag) and every function then
 * returns that code up the stack.
 */
#ifndef PACEMAP_READER_INTERNAL_H
#define PACEMAP_READER_INTERNAL_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "pacemap/error.h"
#include "pacemap/graph.h"

/* Limits besides PM_READER_MAX_LINE / _NAME (documented in docs/format.md). */
#define READER_MAX_CORES 4096u     /* cores in a `procs` line, in total */
#define READER_MAX_CLASSES 64u     /* classes in a `procs` line */
#define READER_MAX_FIR_TAPS 65536u
#define READER_MAX_BIQUADS 4096u
#define READER_MAX_FFT (1u << 20)

typedef enum reader_tok_kind {
    TOK_END,    /* end of line (or a comment) */
    TOK_NAME,   /* [A-Za-z_][A-Za-z0-9_.]*, '-' allowed inside (for per-word) */
    TOK_INT,    /* decimal digits only; value holds it */
    TOK_FREQ,   /* digits with a fraction and/or letters after: 44.1kHz */
    TOK_STRING, /* "..." with \" and \\ escapes; text includes the quotes */
    TOK_ARROW,  /* -> */
    TOK_EQ,     /* = */
    TOK_COMMA,  /* , */
    TOK_COLON   /* : */
} reader_tok_kind;

typedef struct reader_tok {
    reader_tok_kind kind;
    uint32_t col;     /* 1-based byte column of the first character */
    const char *text; /* into the current line */
    size_t len;
    int64_t value;    /* TOK_INT only */
} reader_tok;

typedef struct reader_pin {
    uint32_t node;
    uint32_t line, col; /* of the pin value, for the end-of-file check */
    int64_t core;
} reader_pin;

/* An edge line whose names wait to be looked up in one batch. */
typedef struct reader_edge_line {
    uint32_t lineno;
    uint32_t first, count; /* its names: refs first .. first+count */
    bool complete;         /* parsed to its end (else an error stopped it) */
    pm_edge attrs;         /* delay, words, produce, consume */
} reader_edge_line;

/* A node line waiting to be stored with its batch; its name is in the
 * state's refs at the same index. */
typedef struct reader_node_line {
    uint32_t lineno, col;   /* of the name */
    bool complete;          /* parsed to its end (else an error stopped it) */
    bool has_cycles, per_class;
    int64_t cycles, largest;
    uint32_t cycles_col;
    int64_t pin_core;       /* -1 = none */
    uint32_t pin_class;     /* PM_NONE = none */
    uint32_t pin_col;
    pm_work_kind work;
    uint32_t work_param;
} reader_node_line;

/* Node and edge lines are looked up this many names at a time. */
#define READER_BATCH 1024u
/* Most names one line can hold: a link takes at least 3 bytes ("->x"). */
#define READER_MAX_CHAIN (PM_READER_MAX_LINE / 3 + 2)

/* Limits a test may lower to reach the count errors with small inputs. */
typedef struct reader_limits {
    uint32_t max_nodes;
    uint32_t max_edges;
} reader_limits;

typedef struct reader_state {
    pm_graph *g;
    pm_diag *diag;
    const char *file;
    int rc;                 /* first error, PM_OK while none */
    reader_limits lim;
    /* the current line (without its line ending) and the lexer position */
    const char *line;
    size_t line_len, pos;
    uint32_t lineno;        /* 1-based; saturates at UINT32_MAX */
    reader_tok tok;         /* the current token */
    char found[64];         /* scratch for reader_found() */
    /* line of the first `title`, `clock`, ... statement, 0 = not seen */
    uint32_t seen_title, seen_clock, seen_rate, seen_procs, seen_comm, seen_inter;
    uint32_t *class_col;    /* column of each class in the `procs` line */
    reader_pin *pins;       /* pin=N attributes, checked at the end */
    size_t npins, pins_cap;
    uint64_t total_cycles;  /* sum over nodes of their largest cycles */
    uint64_t total_delay;   /* sum over edges of their delays */
    /* node or edge lines read but not yet looked up (reader_flush) */
    reader_node_line *nlines;
    size_t nnlines;
    int64_t *rows;          /* per-class cycles of the pending node lines */
    const char **ref_text;  /* names in the pending lines, into the text */
    size_t *ref_len;
    uint32_t *ref_col;
    uint32_t *ref_id;
    size_t nrefs;
    reader_edge_line *elines;
    size_t nelines;
} reader_state;

/* Lexer (lexer.c): make the next token of the line current.  PM_OK, or the
 * code of a lexical error (recorded in st). */
int reader_lex_next(reader_state *st);

/* True when the next character after the current token (blanks skipped) is
 * '=': one character of lookahead, enough for the edge chain's end. */
bool reader_lex_eq_follows(const reader_state *st);

/* Record the first error: code, the current line, `col`, the message. */
int reader_fail(reader_state *st, int code, uint32_t col, const char *fmt, ...)
    __attribute__((format(printf, 4, 5)));

/* "end of line" or the current token quoted (shortened past 40 bytes);
 * valid until the next call. */
const char *reader_found(reader_state *st);

/* Parse the current line (lexer already positioned at its start). */
int reader_parse_line(reader_state *st);

/* Node and edge lines are not stored one by one: their names are looked up
 * in batches, so that the memory loads of many lookups overlap (reader_batch.c).
 * Only one kind is pending at a time.  A flush looks the names up, reports
 * the first error in file order (duplicate or unknown node, count limits)
 * and stores the complete lines.  It happens before a statement of another
 * kind, when a batch is full, before the text under the pending names goes
 * away, and on an error (an error on an earlier line is the one to report). */
int reader_flush_nodes(reader_state *st);
int reader_flush_edges(reader_state *st);
int reader_flush(reader_state *st);

/* Whole-file checks after the last line; then the graph is finalized. */
int reader_finish(reader_state *st);

/* The reader with explicit limits (the public functions use the defaults). */
int reader_read_string_limited(const char *text, size_t len, const char *name,
                               const reader_limits *lim, pm_graph **out,
                               pm_diag *diag);

#endif
