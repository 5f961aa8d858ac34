/*
 * reader_stmt.c - one parse function per `.pace` statement (docs/format.md).
 *
 * Each function opens with the grammar rule it implements, consumes the
 * tokens of the current line through the accept/expect helpers below and
 * checks values as it goes.  Platform statements go straight into the graph;
 * `node` and `edge` lines are kept pending and stored in batches by
 * reader_batch.c (which checks duplicate and unknown names).  Checks that
 * need the whole file (pins against the final core count, classes that run
 * nothing) are in reader.c.  Every message names what was expected and what
 * was found.
 */
#include "reader_internal.h"

#include "pacemap/reader.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define RD_MAX_STR "4611686018427387903" /* PM_MAX_VALUE, for messages */
_Static_assert(PM_MAX_VALUE == INT64_C(4611686018427387903), "RD_MAX_STR is PM_MAX_VALUE");

static bool rd_is(const reader_tok *t, const char *word)
{
    size_t n = strlen(word);
    return t->kind == TOK_NAME && t->len == n && memcmp(t->text, word, n) == 0;
}

static int rd_next(reader_state *st)
{
    return st->rc ? st->rc : reader_lex_next(st);
}

/* Consume the current token if it is `kind`. */
static bool rd_accept(reader_state *st, reader_tok_kind kind)
{
    if (st->tok.kind != kind)
        return false;
    rd_next(st);
    return true;
}

/* The current token must be `kind`: "expected WHAT after AFTER, found X". */
static int rd_expect(reader_state *st, reader_tok_kind kind, const char *what,
                     const char *after)
{
    if (st->tok.kind != kind)
        return reader_fail(st, PM_ESYNTAX, st->tok.col, "expected %s after %s, found %s",
                           what, after, reader_found(st));
    return rd_next(st);
}

static int rd_end(reader_state *st)
{
    if (st->rc || st->tok.kind == TOK_END)
        return st->rc;
    return reader_fail(st, PM_ESYNTAX, st->tok.col, "expected end of line, found %s",
                       reader_found(st));
}

/* Statements allowed once: remember the line of the first. */
static int rd_once(reader_state *st, uint32_t *seen, const char *word)
{
    if (*seen)
        return reader_fail(st, PM_ESYNTAX, st->tok.col, "'%s' given twice (first on line %u)",
                           word, *seen);
    *seen = st->lineno;
    return rd_next(st);
}

/* A whole number value after `KEY=` (the token must be an integer). */
static int rd_int(reader_state *st, const char *key, char sep, int64_t *v)
{
    if (st->tok.kind != TOK_INT)
        return reader_fail(st, PM_ESYNTAX, st->tok.col,
                           "expected a whole number after '%s%c', found %s", key, sep,
                           reader_found(st));
    *v = st->tok.value;
    return rd_next(st);
}

/* Names in the scenario are [A-Za-z_][A-Za-z0-9_.]*; the lexer also lets '-'
 * through (for the key per-word), so declared names are checked here. */
static int rd_check_name(reader_state *st, const char *what)
{
    if (memchr(st->tok.text, '-', st->tok.len))
        return reader_fail(st, PM_ENAME, st->tok.col,
                           "invalid %s name %s (names use letters, digits, '_' and '.')",
                           what, reader_found(st));
    return PM_OK;
}

/* key := NAME '=' ; *which = index of NAME in keys[], each key at most once. */
static int rd_key(reader_state *st, const char *stmt, const char *const *keys, unsigned nkeys,
                  const char *list, unsigned *seen, unsigned *which)
{
    if (st->tok.kind != TOK_NAME)
        return reader_fail(st, PM_ESYNTAX, st->tok.col, "expected key=value, found %s",
                           reader_found(st));
    unsigned k = 0;
    while (k < nkeys && !rd_is(&st->tok, keys[k]))
        k++;
    if (k == nkeys)
        return reader_fail(st, PM_ESYNTAX, st->tok.col, "unknown key %s for '%s' (expected %s)",
                           reader_found(st), stmt, list);
    if (*seen & (1u << k))
        return reader_fail(st, PM_ESYNTAX, st->tok.col, "key '%s' given twice", keys[k]);
    *seen |= 1u << k;
    *which = k;
    if (rd_next(st) == PM_OK && st->tok.kind != TOK_EQ)
        return reader_fail(st, PM_ESYNTAX, st->tok.col, "expected '=' after '%s', found %s",
                           keys[k], reader_found(st));
    return rd_next(st);
}

/* title := 'title' STRING */
static int rd_title(reader_state *st)
{
    if (rd_once(st, &st->seen_title, "title"))
        return st->rc;
    if (st->tok.kind != TOK_STRING)
        return rd_expect(st, TOK_STRING, "a double-quoted string", "'title'");
    char *s = malloc(st->tok.len);
    if (!s)
        return reader_fail(st, PM_ENOMEM, st->tok.col, "out of memory");
    size_t n = 0;
    for (size_t i = 1; i + 1 < st->tok.len; i++) {
        if (st->tok.text[i] == '\\')
            i++; /* the lexer allowed only \" and \\ */
        s[n++] = st->tok.text[i];
    }
    s[n] = '\0';
    st->g->platform.title = s;
    rd_next(st);
    return rd_end(st);
}

static int rd_unit_exp(const char *u, size_t n)
{
    static const char *const units[] = { "Hz", "kHz", "MHz", "GHz" };
    for (int k = 0; k < 4; k++)
        if (strlen(units[k]) == n && memcmp(u, units[k], n) == 0)
            return 3 * k;
    return -1;
}

/* frequency := DIGITS ['.' DIGITS] UNIT, a whole number of Hz in 1..2^62-1 */
static int rd_frequency(reader_state *st, const char *word, uint64_t *hz)
{
    const reader_tok *t = &st->tok;
    size_t i = 0, f0, f1;
    uint64_t ip = 0, fp = 0;
    for (; i < t->len && t->text[i] >= '0' && t->text[i] <= '9'; i++)
        ip = ip > UINT64_MAX / 10 - 1 ? UINT64_MAX : ip * 10 + (uint64_t)(t->text[i] - '0');
    f0 = f1 = i + (i < t->len && t->text[i] == '.');
    while (f1 < t->len && t->text[f1] >= '0' && t->text[f1] <= '9')
        f1++;
    int e = rd_unit_exp(t->text + f1, t->len - f1);
    if (t->kind != TOK_FREQ || f1 == t->len)
        return reader_fail(st, PM_ESYNTAX, t->col, "expected a frequency with a unit "
                           "(Hz, kHz, MHz or GHz) after '%s', found %s", word, reader_found(st));
    if (e < 0)
        return reader_fail(st, PM_ESYNTAX, t->col,
                           "unknown unit '%.*s' in %s (use Hz, kHz, MHz or GHz)",
                           (int)(t->len - f1), t->text + f1, reader_found(st));
    size_t fe = f1;
    while (fe > f0 && t->text[fe - 1] == '0')
        fe--; /* 44.100kHz is 44.1kHz */
    if (fe - f0 > (size_t)e)
        return reader_fail(st, PM_ERANGE, t->col, "%s is not a whole number of Hz",
                           reader_found(st));
    uint64_t scale = 1;
    for (int k = 0; k < e; k++)
        scale *= 10;
    for (size_t k = f0; k < f0 + (size_t)e; k++)
        fp = fp * 10 + (k < fe ? (uint64_t)(t->text[k] - '0') : 0);
    if (ip > ((uint64_t)PM_MAX_VALUE - fp) / scale)
        return reader_fail(st, PM_ERANGE, t->col, "%s is too large (at most " RD_MAX_STR " Hz)",
                           reader_found(st));
    *hz = ip * scale + fp;
    if (*hz == 0)
        return reader_fail(st, PM_ERANGE, t->col, "'%s' must be more than 0 Hz, found %s",
                           word, reader_found(st));
    return rd_next(st);
}

/* clock := 'clock' FREQUENCY */
static int rd_clock(reader_state *st)
{
    if (rd_once(st, &st->seen_clock, "clock") ||
        rd_frequency(st, "clock", &st->g->platform.clock_hz))
        return st->rc;
    return rd_end(st);
}

/* rate := 'rate' FREQUENCY */
static int rd_rate(reader_state *st)
{
    if (rd_once(st, &st->seen_rate, "rate") ||
        rd_frequency(st, "rate", &st->g->platform.rate_hz))
        return st->rc;
    return rd_end(st);
}

/* One class of a `procs` line, kept until the line is complete. */
typedef struct rd_class {
    const char *name;
    size_t len;
    uint32_t col;
    uint32_t count;
} rd_class;

/* count := INT in 1..READER_MAX_CORES, added to *total */
static int rd_core_count(reader_state *st, const char *after, char sep, uint64_t *total,
                         uint32_t *count)
{
    int64_t v = 0;
    uint32_t col = st->tok.col;
    if (rd_int(st, after, sep, &v))
        return st->rc;
    if (v < 1)
        return reader_fail(st, PM_ERANGE, col, "core count must be at least 1, found '0'");
    *total += (uint64_t)v;
    if (*total > READER_MAX_CORES)
        return reader_fail(st, PM_ELIMIT, col, "too many cores: %llu (at most %u)",
                           (unsigned long long)*total, READER_MAX_CORES);
    *count = (uint32_t)v;
    return PM_OK;
}

/* class := NAME ':' count */
static int rd_procs_class(reader_state *st, rd_class *cls, uint32_t n, uint64_t *total)
{
    if (rd_check_name(st, "class"))
        return st->rc;
    for (uint32_t c = 0; c < n; c++)
        if (cls[c].len == st->tok.len && memcmp(cls[c].name, st->tok.text, st->tok.len) == 0)
            return reader_fail(st, PM_ENAME, st->tok.col, "class %s declared twice in 'procs'",
                               reader_found(st));
    if (n == READER_MAX_CLASSES)
        return reader_fail(st, PM_ELIMIT, st->tok.col, "too many core classes (at most %u)",
                           READER_MAX_CLASSES);
    cls[n] = (rd_class){ st->tok.text, st->tok.len, st->tok.col, 0 };
    char after[PM_READER_MAX_NAME + 16];
    snprintf(after, sizeof after, "class %s", reader_found(st));
    rd_next(st);
    if (rd_expect(st, TOK_COLON, "':'", after))
        return st->rc;
    snprintf(after, sizeof after, "%.*s", (int)cls[n].len, cls[n].name);
    return rd_core_count(st, after, ':', total, &cls[n].count);
}

/* Hand the classes to the graph (it copies the names). */
static int rd_procs_store(reader_state *st, const rd_class *cls, uint32_t n)
{
    char *buf = malloc(st->line_len + n);
    const char *names[READER_MAX_CLASSES];
    uint32_t counts[READER_MAX_CLASSES];
    st->class_col = malloc(n * sizeof *st->class_col);
    if (!buf || !st->class_col) {
        free(buf);
        return reader_fail(st, PM_ENOMEM, 0, "out of memory");
    }
    char *p = buf;
    for (uint32_t c = 0; c < n; c++) {
        memcpy(p, cls[c].name, cls[c].len);
        p[cls[c].len] = '\0';
        names[c] = p;
        p += cls[c].len + 1;
        counts[c] = cls[c].count;
        st->class_col[c] = cls[c].col;
    }
    int rc = pm_graph_set_cores(st->g, n, names, counts);
    free(buf);
    return rc ? reader_fail(st, rc, cls[0].col, "out of memory") : PM_OK;
}

/* procs := 'procs' count | 'procs' class { class } */
static int rd_procs(reader_state *st)
{
    uint64_t total = 0;
    uint32_t count;
    if (rd_once(st, &st->seen_procs, "procs"))
        return st->rc;
    if (st->tok.kind == TOK_INT) {
        if (rd_core_count(st, "procs", ' ', &total, &count) || rd_end(st))
            return st->rc;
        int rc = pm_graph_set_cores(st->g, 1, NULL, &count);
        return rc ? reader_fail(st, rc, 0, "out of memory") : PM_OK;
    }
    if (st->tok.kind != TOK_NAME)
        return reader_fail(st, PM_ESYNTAX, st->tok.col,
                           "expected a core count or CLASS:COUNT after 'procs', found %s",
                           reader_found(st));
    rd_class cls[READER_MAX_CLASSES];
    uint32_t n = 0;
    for (; st->tok.kind == TOK_NAME; n++)
        if (rd_procs_class(st, cls, n, &total))
            return st->rc;
    if (st->tok.kind != TOK_END)
        return reader_fail(st, PM_ESYNTAX, st->tok.col,
                           "expected CLASS:COUNT or end of line, found %s", reader_found(st));
    return rd_procs_store(st, cls, n);
}

/* The value of transfer=: 'block' or 'token'. */
static int rd_transfer(reader_state *st)
{
    if (st->tok.kind != TOK_NAME || (!rd_is(&st->tok, "block") && !rd_is(&st->tok, "token")))
        return reader_fail(st, PM_ESYNTAX, st->tok.col,
                           "expected 'block' or 'token' after 'transfer=', found %s",
                           reader_found(st));
    st->g->platform.block_transfers = rd_is(&st->tok, "block");
    return rd_next(st);
}

/* comm := 'comm' { KEY '=' VALUE }
 * KEY := latency | per-word | send | recv | word-bytes (INT, word-bytes >= 1)
 *      | transfer ('block' | 'token') */
static int rd_comm(reader_state *st)
{
    static const char *const keys[] = { "latency", "per-word", "send", "recv", "word-bytes",
                                        "transfer" };
    pm_comm *c = &st->g->platform.comm;
    int64_t *slot[] = { &c->latency, &c->per_word, &c->send, &c->recv,
                        &st->g->platform.word_bytes };
    unsigned seen = 0, k;
    if (rd_once(st, &st->seen_comm, "comm"))
        return st->rc;
    while (st->tok.kind != TOK_END) {
        uint32_t col = st->tok.col;
        if (rd_key(st, "comm", keys, 6, "latency, per-word, send, recv, word-bytes or transfer",
                   &seen, &k) ||
            (k == 5 ? rd_transfer(st) : rd_int(st, keys[k], '=', slot[k])))
            return st->rc;
        if (k == 4 && st->g->platform.word_bytes == 0)
            return reader_fail(st, PM_ERANGE, col, "word-bytes must be at least 1");
    }
    return st->rc;
}

/* interconnect := 'interconnect' ( 'p2p' | 'bus' ) */
static int rd_interconnect(reader_state *st)
{
    if (rd_once(st, &st->seen_inter, "interconnect"))
        return st->rc;
    if (rd_is(&st->tok, "p2p"))
        st->g->platform.interconnect = PM_P2P;
    else if (rd_is(&st->tok, "bus"))
        st->g->platform.interconnect = PM_BUS;
    else
        return reader_fail(st, PM_ESYNTAX, st->tok.col,
                           "expected 'p2p' or 'bus' after 'interconnect', found %s",
                           reader_found(st));
    rd_next(st);
    return rd_end(st);
}

/* The node line being read and its per-class cycles row. */
static reader_node_line *rd_cur(reader_state *st)
{
    return &st->nlines[st->nnlines - 1];
}

static int64_t *rd_row(reader_state *st)
{
    return st->rows + (st->nnlines - 1) * READER_MAX_CLASSES;
}

/* A class name in a node line (the current token, a NAME); classes come
 * from an earlier `procs` line. */
static int rd_class_ref(reader_state *st, uint32_t *c)
{
    const pm_platform *p = &st->g->platform;
    *c = p->classes_named ? pm_graph_find_class(st->g, st->tok.text, st->tok.len) : PM_NONE;
    if (*c != PM_NONE)
        return PM_OK;
    if (!p->classes_named)
        return reader_fail(st, PM_ENAME, st->tok.col, "unknown class %s (declare core classes "
                           "with a 'procs CLASS:COUNT' line before this node)",
                           reader_found(st));
    uint32_t near = pm_graph_suggest_class(st->g, st->tok.text, st->tok.len);
    if (near != PM_NONE)
        return reader_fail(st, PM_ENAME, st->tok.col,
                           "unknown class %s (did you mean '%s'? classes come from the "
                           "'procs' line on line %u)", reader_found(st),
                           p->class_names[near], st->seen_procs);
    return reader_fail(st, PM_ENAME, st->tok.col,
                       "unknown class %s (not in the 'procs' line on line %u)",
                       reader_found(st), st->seen_procs);
}

/* per_class := NAME ':' INT { ',' NAME ':' INT } */
static int rd_cycles_classes(reader_state *st, reader_node_line *n)
{
    uint32_t k = st->g->platform.nclasses, c;
    int64_t *row = rd_row(st);
    for (uint32_t i = 0; i < k; i++)
        row[i] = PM_CANNOT_RUN;
    n->per_class = true;
    for (;;) {
        uint32_t col = st->tok.col;
        if (st->tok.kind != TOK_NAME)
            return rd_expect(st, TOK_NAME, "a class name", "','");
        if (rd_class_ref(st, &c))
            return st->rc;
        const char *cname = st->g->platform.class_names[c];
        if (row[c] != PM_CANNOT_RUN)
            return reader_fail(st, PM_ESYNTAX, col, "class '%s' given twice in 'cycles'", cname);
        char after[PM_READER_MAX_NAME + 16];
        snprintf(after, sizeof after, "class '%s'", cname);
        rd_next(st);
        if (rd_expect(st, TOK_COLON, "':'", after) || rd_int(st, cname, ':', &row[c]))
            return st->rc;
        if (row[c] > n->largest)
            n->largest = row[c];
        if (!rd_accept(st, TOK_COMMA))
            return st->rc;
    }
}

/* cycles := INT | per_class */
static int rd_node_cycles(reader_state *st, reader_node_line *n)
{
    n->has_cycles = true;
    n->cycles_col = st->tok.col;
    if (st->tok.kind == TOK_NAME)
        return rd_cycles_classes(st, n);
    if (st->tok.kind != TOK_INT)
        return reader_fail(st, PM_ESYNTAX, st->tok.col, "expected a number or CLASS:NUMBER "
                           "list after 'cycles=', found %s", reader_found(st));
    n->cycles = n->largest = st->tok.value;
    return rd_next(st);
}

/* pin := INT | NAME */
static int rd_node_pin(reader_state *st, reader_node_line *n)
{
    n->pin_col = st->tok.col;
    if (st->tok.kind == TOK_INT) {
        n->pin_core = st->tok.value;
        return rd_next(st);
    }
    if (st->tok.kind != TOK_NAME)
        return reader_fail(st, PM_ESYNTAX, st->tok.col, "expected a core number or class "
                           "name after 'pin=', found %s", reader_found(st));
    if (rd_class_ref(st, &n->pin_class))
        return st->rc;
    return rd_next(st);
}

/* work := 'spin' | 'fir' ':' INT | 'biquad' ':' INT | 'fft' ':' INT */
static int rd_node_work(reader_state *st, reader_node_line *n)
{
    static const char *const kinds[] = { "spin", "fir", "biquad", "fft" };
    static const char *const what[] = { "", "fir taps", "biquad sections", "fft size" };
    static const uint32_t top[] = { 0, READER_MAX_FIR_TAPS, READER_MAX_BIQUADS, READER_MAX_FFT };
    int k = 0;
    while (k < 4 && !rd_is(&st->tok, kinds[k]))
        k++;
    if (k == 4)
        return reader_fail(st, PM_ESYNTAX, st->tok.col, "expected spin, fir:TAPS, "
                           "biquad:SECTIONS or fft:N after 'work=', found %s", reader_found(st));
    n->work = (pm_work_kind)k;
    rd_next(st);
    if (k == 0)
        return st->rc;
    char after[16];
    snprintf(after, sizeof after, "'%s'", kinds[k]);
    int64_t v = 0;
    if (rd_expect(st, TOK_COLON, "':'", after))
        return st->rc;
    uint32_t col = st->tok.col;
    if (rd_int(st, kinds[k], ':', &v))
        return st->rc;
    bool pow2 = (v & (v - 1)) == 0;
    if (v < (k == 3 ? 2 : 1) || v > top[k] || (k == 3 && !pow2))
        return reader_fail(st, PM_ERANGE, col,
                           "%s must be %sfrom %d to %u, found '%lld'", what[k],
                           k == 3 ? "a power of two " : "", k == 3 ? 2 : 1, top[k],
                           (long long)v);
    n->work_param = (uint32_t)v;
    return PM_OK;
}

/* Checks once the whole node line is read. */
static int rd_node_check(reader_state *st, const reader_node_line *n)
{
    size_t i = st->nnlines - 1;
    if (!n->has_cycles)
        return reader_fail(st, PM_ESYNTAX, n->col, "missing key 'cycles' for node '%.*s'",
                           (int)st->ref_len[i], st->ref_text[i]);
    if (n->pin_class != PM_NONE && n->per_class && rd_row(st)[n->pin_class] == PM_CANNOT_RUN)
        return reader_fail(st, PM_EPLATFORM, n->pin_col,
                           "node '%.*s' is pinned to class '%s', but has no cycles for it",
                           (int)st->ref_len[i], st->ref_text[i],
                           st->g->platform.class_names[n->pin_class]);
    if ((uint64_t)n->largest > (uint64_t)PM_MAX_VALUE - st->total_cycles)
        return reader_fail(st, PM_ELIMIT, n->cycles_col,
                           "the cycles of all nodes add up to more than " RD_MAX_STR);
    st->total_cycles += (uint64_t)n->largest;
    return PM_OK;
}

/* The node's name: a valid name, kept with the line for the batched lookup
 * (where duplicates and the node limit are checked). */
static int rd_node_name(reader_state *st)
{
    if (st->tok.kind != TOK_NAME)
        return rd_expect(st, TOK_NAME, "a node name", "'node'");
    if (rd_check_name(st, "node"))
        return st->rc;
    size_t r = st->nrefs++;
    st->ref_text[r] = st->tok.text;
    st->ref_len[r] = st->tok.len;
    st->nlines[st->nnlines++] = (reader_node_line){ .lineno = st->lineno, .col = st->tok.col,
                                                    .pin_core = -1, .pin_class = PM_NONE,
                                                    .work = PM_WORK_SPIN };
    return rd_next(st);
}

/* node := 'node' NAME { 'cycles' '=' cycles | 'pin' '=' pin | 'work' '=' work } */
static int rd_node(reader_state *st)
{
    static const char *const keys[] = { "cycles", "pin", "work" };
    unsigned seen = 0, k;
    if (rd_next(st) || rd_node_name(st))
        return st->rc;
    reader_node_line *n = rd_cur(st);
    while (st->tok.kind != TOK_END) {
        if (rd_key(st, "node", keys, 3, "cycles, pin or work", &seen, &k))
            return st->rc;
        int rc = k == 0 ? rd_node_cycles(st, n) : k == 1 ? rd_node_pin(st, n)
                                                          : rd_node_work(st, n);
        if (rc)
            return rc;
    }
    if (rd_node_check(st, n))
        return st->rc;
    n->complete = true;
    return st->nnlines >= READER_BATCH ? reader_flush_nodes(st) : PM_OK;
}

/* One node name of an edge chain, kept for the batched lookup. */
static int rd_edge_node(reader_state *st, reader_edge_line *el, const char *after)
{
    if (st->tok.kind != TOK_NAME)
        return rd_expect(st, TOK_NAME, "a node name", after);
    size_t r = st->nrefs++;
    st->ref_text[r] = st->tok.text;
    st->ref_len[r] = st->tok.len;
    st->ref_col[r] = st->tok.col;
    el->count++;
    return rd_next(st);
}

/* chain := NAME '->' NAME { '->' NAME } */
static int rd_edge_chain(reader_state *st, reader_edge_line *el)
{
    if (rd_edge_node(st, el, "'edge'"))
        return st->rc;
    if (st->tok.kind != TOK_ARROW)
        return reader_fail(st, PM_ESYNTAX, st->tok.col, "expected '->' after '%.*s', found %s",
                           (int)st->ref_len[el->first], st->ref_text[el->first],
                           reader_found(st));
    for (rd_next(st);;) {
        if (rd_edge_node(st, el, "'->'"))
            return st->rc;
        if (rd_accept(st, TOK_ARROW))
            continue;
        if (st->rc || st->tok.kind != TOK_NAME || reader_lex_eq_follows(st))
            return st->rc;
        size_t last = st->nrefs - 1;
        return reader_fail(st, PM_ESYNTAX, st->tok.col,
                           "expected '->' or key=value after '%.*s', found %s",
                           (int)st->ref_len[last], st->ref_text[last], reader_found(st));
    }
}

/* attrs := { KEY '=' INT }  KEY := delay | words | produce | consume */
static int rd_edge_attrs(reader_state *st, pm_edge *e, uint32_t *delay_col)
{
    static const char *const keys[] = { "delay", "words", "produce", "consume" };
    int64_t *slot[] = { &e->delay, &e->words, &e->produce, &e->consume };
    unsigned seen = 0, k;
    while (st->tok.kind != TOK_END) {
        if (rd_key(st, "edge", keys, 4, "delay, words, produce or consume", &seen, &k))
            return st->rc;
        uint32_t col = st->tok.col;
        if (rd_int(st, keys[k], '=', slot[k]))
            return st->rc;
        if (k == 0)
            *delay_col = col;
        if (k >= 2 && *slot[k] < 1)
            return reader_fail(st, PM_ERANGE, col, "'%s' must be at least 1, found '0'",
                               keys[k]);
    }
    return PM_OK;
}

/* edge := 'edge' chain attrs ; one edge per link, each with the attributes.
 * The names are looked up later, in a batch (reader_flush_edges). */
static int rd_edge(reader_state *st)
{
    uint32_t delay_col = 0;
    reader_edge_line *el = &st->elines[st->nelines++];
    *el = (reader_edge_line){ st->lineno, (uint32_t)st->nrefs, 0, false,
                              pm_graph_edge_default(0, 0) };
    if (rd_next(st) || rd_edge_chain(st, el) || rd_edge_attrs(st, &el->attrs, &delay_col))
        return st->rc;
    uint64_t links = el->count - 1, delay = (uint64_t)el->attrs.delay;
    if (delay > ((uint64_t)PM_MAX_VALUE - st->total_delay) / links)
        return reader_fail(st, PM_ELIMIT, delay_col,
                           "the delays of all edges add up to more than " RD_MAX_STR);
    st->total_delay += delay * links;
    el->complete = true;
    return st->nrefs >= READER_BATCH ? reader_flush_edges(st) : PM_OK;
}

/* statement := title | clock | rate | procs | comm | interconnect | node | edge */
int reader_parse_line(reader_state *st)
{
    static const struct {
        const char *word;
        int (*parse)(reader_state *);
    } stmts[] = { { "edge", rd_edge },   { "node", rd_node }, { "title", rd_title },
                  { "clock", rd_clock }, { "rate", rd_rate },   { "procs", rd_procs },
                  { "comm", rd_comm },   { "interconnect", rd_interconnect } };
    if (rd_next(st) || st->tok.kind == TOK_END)
        return st->rc;
    /* a node line must not change what earlier edges name, nor an edge
     * line miss the nodes before it */
    if ((st->nelines && !rd_is(&st->tok, "edge")) || (st->nnlines && !rd_is(&st->tok, "node")))
        if (reader_flush(st))
            return st->rc;
    for (size_t i = 0; i < sizeof stmts / sizeof stmts[0]; i++)
        if (rd_is(&st->tok, stmts[i].word))
            return stmts[i].parse(st);
    if (st->tok.kind != TOK_NAME)
        return reader_fail(st, PM_ESYNTAX, st->tok.col, "expected a statement, found %s",
                           reader_found(st));
    return reader_fail(st, PM_ESYNTAX, st->tok.col, "unknown statement %s (expected title, "
                       "clock, rate, procs, comm, interconnect, node or edge)",
                       reader_found(st));
}
