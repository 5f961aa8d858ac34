/*
 * test_reader.c - the scenario reader: every statement and attribute lands in
 * the right pm_graph field, and every error the reader can produce comes with
 * its exact "FILE:LINE:COL: error: MSG" line and code.  Also reads every
 * published reference scenario in $PM_REFDATA (when present) and checks the
 * node and edge counts against a plain count of its `node` / `edge` lines.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>

#include <dirent.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "pacemap/error.h"
#include "pacemap/graph.h"
#include "pacemap/reader.h"

#include "../sched/read/reader_internal.h"

/* Read `text` as "t.pace"; on success return the graph, else fail. */
static pm_graph *read_ok(const char *text)
{
    pm_graph *g = NULL;
    pm_diag d;
    int rc = pm_reader_read_string(text, strlen(text), "t.pace", &g, &d);
    if (rc != PM_OK)
        print_error("unexpected error: %s:%u:%u: error: %s\n", d.file, d.line, d.col, d.msg);
    assert_int_equal(rc, PM_OK);
    assert_non_null(g);
    assert_true(g->finalized);
    return g;
}

static void diag_line(const pm_diag *d, char *buf, size_t n)
{
    snprintf(buf, n, "%s:%u:%u: error: %s", d->file, d->line, d->col, d->msg);
}

/* Read text[0..len) and expect the error line `want` and code `code`. */
static void expect_error_n(const char *text, size_t len, int code, const char *want)
{
    pm_graph *g = (pm_graph *)1;
    pm_diag d;
    char got[1200];
    int rc = pm_reader_read_string(text, len, "t.pace", &g, &d);
    diag_line(&d, got, sizeof got);
    if (strcmp(got, want) != 0 || rc != code)
        print_error("input: %.60s\n  want: %s (%d)\n  got:  %s (%d)\n", text, want, code, got,
                    rc);
    assert_null(g);
    assert_string_equal(got, want);
    assert_int_equal(rc, code);
}

static void expect_error(const char *text, int code, const char *want)
{
    expect_error_n(text, strlen(text), code, want);
}

/* ---- statements and attributes ------------------------------------------ */

static void test_title_clock_rate(void **state)
{
    (void)state;
    pm_graph *g = read_ok("title \"a \\\"b\\\" \\\\ c # not a comment\"\n"
                          "clock 1.5GHz\nrate 44.1kHz\nnode a cycles=0\n");
    assert_string_equal(g->platform.title, "a \"b\" \\ c # not a comment");
    assert_true(g->platform.clock_hz == 1500000000u);
    assert_true(g->platform.rate_hz == 44100u);
    pm_graph_destroy(g);
    g = read_ok("clock 600MHz\nrate 44.100kHz\nnode a cycles=0\n");
    assert_true(g->platform.clock_hz == 600000000u);
    assert_true(g->platform.rate_hz == 44100u);
    pm_graph_destroy(g);
    g = read_ok("clock 7Hz\nrate 0.000001MHz\ntitle \"\"\nnode a cycles=0\n");
    assert_true(g->platform.clock_hz == 7u && g->platform.rate_hz == 1u);
    assert_string_equal(g->platform.title, "");
    pm_graph_destroy(g);
}

static void test_defaults(void **state)
{
    (void)state;
    pm_graph *g = read_ok("node a cycles=5\n");
    const pm_platform *p = &g->platform;
    assert_null(p->title);
    assert_true(p->clock_hz == 0 && p->rate_hz == 0);
    assert_int_equal(p->ncores, 1);
    assert_int_equal(p->nclasses, 1);
    assert_false(p->procs_given);
    assert_false(p->classes_named);
    assert_int_equal(p->interconnect, PM_P2P);
    assert_true(p->comm.latency == 0 && p->comm.per_word == 0 && p->comm.send == 0 &&
                p->comm.recv == 0);
    const pm_node *n = &g->nodes[0];
    assert_true(n->cycles == 5 && n->class_cycles == PM_NONE);
    assert_true(n->pin_core == PM_NONE && n->pin_class == PM_NONE);
    assert_int_equal(n->work, PM_WORK_SPIN);
    assert_int_equal(n->line, 1);
    assert_int_equal(n->col, 6);
    pm_graph_destroy(g);
}

static void test_procs_identical(void **state)
{
    (void)state;
    pm_graph *g = read_ok("procs 4\nnode a cycles=1 pin=3\n");
    const pm_platform *p = &g->platform;
    assert_int_equal(p->ncores, 4);
    assert_int_equal(p->nclasses, 1);
    assert_true(p->procs_given);
    assert_false(p->classes_named);
    assert_int_equal(g->nodes[0].pin_core, 3);
    pm_graph_destroy(g);
}

static void test_procs_classes_and_per_class_cycles(void **state)
{
    (void)state;
    pm_graph *g = read_ok("procs dsp:2 host:1\n"
                          "node a cycles=dsp:40,host:95\n"
                          "node b cycles=host:7 pin=host\n"
                          "node c cycles=dsp:3 pin=1\n"
                          "node d cycles=12 pin=2\n");
    const pm_platform *p = &g->platform;
    assert_int_equal(p->nclasses, 2);
    assert_string_equal(p->class_names[0], "dsp");
    assert_string_equal(p->class_names[1], "host");
    assert_int_equal(p->class_count[0], 2);
    assert_int_equal(p->class_count[1], 1);
    assert_int_equal(p->ncores, 3);
    assert_true(p->core_class[0] == 0 && p->core_class[1] == 0 && p->core_class[2] == 1);
    assert_true(p->classes_named && p->procs_given);
    assert_true(pm_graph_cycles_on(g, 0, 0) == 40 && pm_graph_cycles_on(g, 0, 1) == 95);
    assert_true(pm_graph_cycles_on(g, 1, 0) == PM_CANNOT_RUN);
    assert_true(pm_graph_cycles_on(g, 1, 1) == 7);
    assert_int_equal(g->nodes[1].pin_class, 1);
    assert_int_equal(g->nodes[2].pin_core, 1);
    assert_true(pm_graph_cycles_on(g, 3, 0) == 12 && pm_graph_cycles_on(g, 3, 1) == 12);
    pm_graph_destroy(g);
}

static void test_comm_and_interconnect(void **state)
{
    (void)state;
    pm_graph *g = read_ok("comm latency=30 per-word=2 send=4 recv=5\ninterconnect bus\n"
                          "node a cycles=1\n");
    const pm_comm *c = &g->platform.comm;
    assert_true(c->latency == 30 && c->per_word == 2 && c->send == 4 && c->recv == 5);
    assert_int_equal(g->platform.interconnect, PM_BUS);
    pm_graph_destroy(g);
    g = read_ok("comm recv=9\ninterconnect p2p\nnode a cycles=1\n");
    c = &g->platform.comm;
    assert_true(c->latency == 0 && c->per_word == 0 && c->send == 0 && c->recv == 9);
    assert_int_equal(g->platform.interconnect, PM_P2P);
    pm_graph_destroy(g);
    g = read_ok("comm\nnode a cycles=1\n");
    assert_true(g->platform.comm.latency == 0);
    pm_graph_destroy(g);
}

static void test_work_kinds(void **state)
{
    (void)state;
    pm_graph *g = read_ok("node a cycles=1 work=spin\nnode b cycles=1 work=fir:64\n"
                          "node c work=biquad:4096 cycles=1\nnode d cycles=1 work = fft : 1024\n"
                          "node e cycles=1 work=fft:2\nnode f cycles=1 work=fir:65536\n");
    assert_int_equal(g->nodes[0].work, PM_WORK_SPIN);
    assert_true(g->nodes[1].work == PM_WORK_FIR && g->nodes[1].work_param == 64);
    assert_true(g->nodes[2].work == PM_WORK_BIQUAD && g->nodes[2].work_param == 4096);
    assert_true(g->nodes[3].work == PM_WORK_FFT && g->nodes[3].work_param == 1024);
    assert_true(g->nodes[4].work == PM_WORK_FFT && g->nodes[4].work_param == 2);
    assert_true(g->nodes[5].work == PM_WORK_FIR && g->nodes[5].work_param == 65536);
    pm_graph_destroy(g);
}

static void test_edges_chain_and_attributes(void **state)
{
    (void)state;
    pm_graph *g = read_ok("node a cycles=1\nnode b.1 cycles=2\nnode _c cycles=3\n"
                          "edge a -> b.1\n"
                          "edge a->b.1->_c delay=2 words=4 produce=3 consume=5\n"
                          "  edge\t_c ->_c   delay=1 # state\n");
    assert_int_equal(g->nedges, 4);
    const pm_edge *e = g->edges;
    assert_true(e[0].src == 0 && e[0].dst == 1 && e[0].delay == 0 && e[0].words == 1 &&
                e[0].produce == 1 && e[0].consume == 1);
    assert_true(e[0].line == 4 && e[0].col == 6);
    for (int k = 1; k <= 2; k++)
        assert_true(e[k].delay == 2 && e[k].words == 4 && e[k].produce == 3 &&
                    e[k].consume == 5 && e[k].line == 5);
    assert_true(e[1].src == 0 && e[1].dst == 1 && e[1].col == 6);
    assert_true(e[2].src == 1 && e[2].dst == 2 && e[2].col == 9);
    assert_true(e[3].src == 2 && e[3].dst == 2 && e[3].delay == 1 && e[3].col == 8);
    assert_false(pm_graph_is_single_rate(g));
    /* adjacency is built: node 1 has one out-edge (e2) and two in-edges */
    assert_int_equal(g->out_off[2] - g->out_off[1], 1);
    assert_int_equal(g->in_off[2] - g->in_off[1], 2);
    pm_graph_destroy(g);
}

static void test_line_endings_comments_blanks(void **state)
{
    (void)state;
    const char crlf[] = "# header\r\n\r\nnode a cycles=1\r\n  \t\r\nnode b cycles=2 # x\r\n"
                        "edge a -> b\r\nedge b -> a delay=1";
    pm_graph *g = read_ok(crlf);
    assert_int_equal(g->nnodes, 2);
    assert_int_equal(g->nedges, 2);
    assert_int_equal(g->edges[1].line, 7);
    assert_true(g->edges[1].delay == 1);
    pm_graph_destroy(g);
    g = read_ok("node a cycles=1");
    assert_int_equal(g->nnodes, 1);
    pm_graph_destroy(g);
    /* a byte-order mark is skipped; columns count from after it */
    g = read_ok("\xEF\xBB\xBFnode a cycles=1\n");
    assert_int_equal(g->nnodes, 1);
    assert_int_equal(g->nodes[0].col, 6); /* the name, as without the mark */
    pm_graph_destroy(g);
    expect_error("node a cycles=1\n\xEF\xBB\xBFnode b cycles=1\n", PM_ESYNTAX,
                 "t.pace:2:1: error: unexpected byte 0xef");
}

static void test_limits_at_the_edge_are_fine(void **state)
{
    (void)state;
    char name[PM_READER_MAX_NAME + 1];
    memset(name, 'n', sizeof name - 1);
    name[sizeof name - 1] = '\0';
    size_t cap = PM_READER_MAX_LINE + 1200;
    char *text = malloc(cap);
    assert_non_null(text);
    int len = snprintf(text, cap, "node %s cycles=4611686018427387903\n#", name);
    memset(text + len, 'x', PM_READER_MAX_LINE - 1); /* a comment line of the maximum */
    strcpy(text + len + PM_READER_MAX_LINE - 1, "\r\nedge ");
    strcat(text, name);
    strcat(text, " -> ");
    strcat(text, name);
    strcat(text, " delay=4611686018427387903\n");
    pm_graph *g = read_ok(text);
    assert_true(g->nodes[0].cycles == PM_MAX_VALUE);
    assert_true(g->edges[0].delay == PM_MAX_VALUE);
    assert_string_equal(pm_graph_node_name(g, 0), name);
    pm_graph_destroy(g);
    free(text);
}

/* ---- errors -------------------------------------------------------------- */

static void test_lexical_errors(void **state)
{
    (void)state;
    expect_error_n("node a cycles=1\nnode b\0 cycles=2\n", 33, PM_ESYNTAX,
                   "t.pace:2:7: error: binary file: NUL byte");
    expect_error_n("# abc\0\nnode a cycles=1\n", 23, PM_ESYNTAX,
                   "t.pace:1:6: error: binary file: NUL byte");
    expect_error_n("title \"a\0\"\n", 11, PM_ESYNTAX, "t.pace:1:9: error: binary file: NUL byte");
    expect_error("node a\rcycles=1\n", PM_ESYNTAX,
                 "t.pace:1:7: error: stray carriage return (lines end with LF or CR LF)");
    expect_error("# a\rb\nnode a cycles=1\n", PM_ESYNTAX,
                 "t.pace:1:4: error: stray carriage return (lines end with LF or CR LF)");
    expect_error("node a cycles=1\r", PM_ESYNTAX,
                 "t.pace:1:16: error: stray carriage return (lines end with LF or CR LF)");
    expect_error("node a cycles=1 $\n", PM_ESYNTAX, "t.pace:1:17: error: unexpected character '$'");
    expect_error("node a cycles=1\nedge a - a\n", PM_ESYNTAX,
                 "t.pace:2:8: error: unexpected character '-'");
    expect_error("node \xc3\xa9 cycles=1\n", PM_ESYNTAX, "t.pace:1:6: error: unexpected byte 0xc3");
    expect_error("title \"a\x01\"\n", PM_ESYNTAX, "t.pace:1:9: error: unexpected byte 0x01");
    expect_error("title \"abc\nnode a cycles=1\n", PM_ESYNTAX,
                 "t.pace:1:7: error: unterminated string (missing closing '\"')");
    expect_error("title \"abc\\", PM_ESYNTAX,
                 "t.pace:1:7: error: unterminated string (missing closing '\"')");
    expect_error("title \"a\\nb\"\n", PM_ESYNTAX,
                 "t.pace:1:9: error: unknown escape in string (only \\\" and \\\\ are allowed)");
    expect_error("node a cycles=-5\n", PM_ERANGE,
                 "t.pace:1:15: error: negative value '-5' (values are whole numbers, 0 or more)");
    expect_error("node a cycles=4611686018427387904\n", PM_ERANGE,
                 "t.pace:1:15: error: number '4611686018427387904' is too large "
                 "(at most 4611686018427387903)");
    expect_error("node a cycles=99999999999999999999999999999999999999999999999\n", PM_ERANGE,
                 "t.pace:1:15: error: number '9999999999999999999999999999999999999...' is "
                 "too large (at most 4611686018427387903)");
}

static void test_name_and_line_limits(void **state)
{
    (void)state;
    char text[400];
    char name[PM_READER_MAX_NAME + 2];
    memset(name, 'q', sizeof name - 1);
    name[sizeof name - 1] = '\0';
    snprintf(text, sizeof text, "node %s cycles=1\n", name);
    expect_error(text, PM_ELIMIT, "t.pace:1:6: error: name too long: 257 bytes (at most 256)");
    size_t len = PM_READER_MAX_LINE + 1;
    char *big = malloc(len + 40);
    assert_non_null(big);
    strcpy(big, "node a cycles=1\n#");
    memset(big + 17, 'x', len - 1);
    strcpy(big + 16 + len, "\nnode b cycles=2\n");
    expect_error(big, PM_ELIMIT, "t.pace:2:65537: error: line too long: more than 65536 bytes");
    strcpy(big + 16 + len, "");
    expect_error(big, PM_ELIMIT, "t.pace:2:65537: error: line too long: more than 65536 bytes");
    free(big);
}

static void test_statement_errors(void **state)
{
    (void)state;
    expect_error("", PM_ESYNTAX,
                 "t.pace:0:0: error: no nodes (a scenario needs at least one 'node' line)");
    expect_error("# only a comment\nclock 1MHz\n", PM_ESYNTAX,
                 "t.pace:0:0: error: no nodes (a scenario needs at least one 'node' line)");
    expect_error("= 3\n", PM_ESYNTAX, "t.pace:1:1: error: expected a statement, found '='");
    expect_error("nod a\n", PM_ESYNTAX,
                 "t.pace:1:1: error: unknown statement 'nod' (expected title, clock, rate, "
                 "procs, comm, interconnect, node or edge)");
    expect_error("abcdefghijklmnopqrstuvwxyzabcdefghijklmnopqrstuvwxyz\n", PM_ESYNTAX,
                 "t.pace:1:1: error: unknown statement 'abcdefghijklmnopqrstuvwxyzabcdefghijk...'"
                 " (expected title, clock, rate, procs, comm, interconnect, node or edge)");
    expect_error("clock 1MHz 2\n", PM_ESYNTAX, "t.pace:1:12: error: expected end of line, found '2'");
    expect_error("title \"a\" \"b\"\n", PM_ESYNTAX,
                 "t.pace:1:11: error: expected end of line, found '\"b\"'");
    expect_error("interconnect bus bus\n", PM_ESYNTAX,
                 "t.pace:1:18: error: expected end of line, found 'bus'");
    expect_error("title \"a\"\ntitle \"b\"\n", PM_ESYNTAX,
                 "t.pace:2:1: error: 'title' given twice (first on line 1)");
    expect_error("clock 1Hz\n\nclock 1Hz\n", PM_ESYNTAX,
                 "t.pace:3:1: error: 'clock' given twice (first on line 1)");
    expect_error("rate 1Hz\nrate 1Hz\n", PM_ESYNTAX,
                 "t.pace:2:1: error: 'rate' given twice (first on line 1)");
    expect_error("procs 1\nprocs 1\n", PM_ESYNTAX,
                 "t.pace:2:1: error: 'procs' given twice (first on line 1)");
    expect_error("comm\ncomm\n", PM_ESYNTAX,
                 "t.pace:2:1: error: 'comm' given twice (first on line 1)");
    expect_error("interconnect p2p\ninterconnect bus\n", PM_ESYNTAX,
                 "t.pace:2:1: error: 'interconnect' given twice (first on line 1)");
    expect_error("title abc\n", PM_ESYNTAX,
                 "t.pace:1:7: error: expected a double-quoted string after 'title', found 'abc'");
    expect_error("interconnect ring\n", PM_ESYNTAX,
                 "t.pace:1:14: error: expected 'p2p' or 'bus' after 'interconnect', found 'ring'");
}

static void test_frequency_errors(void **state)
{
    (void)state;
    expect_error("clock 600\n", PM_ESYNTAX,
                 "t.pace:1:7: error: expected a frequency with a unit (Hz, kHz, MHz or GHz) "
                 "after 'clock', found '600'");
    expect_error("rate 44.1\n", PM_ESYNTAX,
                 "t.pace:1:6: error: expected a frequency with a unit (Hz, kHz, MHz or GHz) "
                 "after 'rate', found '44.1'");
    expect_error("rate\n", PM_ESYNTAX,
                 "t.pace:1:5: error: expected a frequency with a unit (Hz, kHz, MHz or GHz) "
                 "after 'rate', found end of line");
    expect_error("clock 600mhz\n", PM_ESYNTAX,
                 "t.pace:1:7: error: unknown unit 'mhz' in '600mhz' (use Hz, kHz, MHz or GHz)");
    expect_error("rate 0.5Hz\n", PM_ERANGE, "t.pace:1:6: error: '0.5Hz' is not a whole number of Hz");
    expect_error("rate 1.0000000001GHz\n", PM_ERANGE,
                 "t.pace:1:6: error: '1.0000000001GHz' is not a whole number of Hz");
    expect_error("clock 5000000000GHz\n", PM_ERANGE,
                 "t.pace:1:7: error: '5000000000GHz' is too large (at most 4611686018427387903 Hz)");
    expect_error("clock 4611686018427387904Hz\n", PM_ERANGE,
                 "t.pace:1:7: error: '4611686018427387904Hz' is too large "
                 "(at most 4611686018427387903 Hz)");
    expect_error("rate 0kHz\n", PM_ERANGE, "t.pace:1:6: error: 'rate' must be more than 0 Hz, "
                 "found '0kHz'");
    expect_error("clock 0.0MHz\n", PM_ERANGE, "t.pace:1:7: error: 'clock' must be more than 0 Hz, "
                 "found '0.0MHz'");
}

static void test_procs_errors(void **state)
{
    (void)state;
    expect_error("procs\n", PM_ESYNTAX, "t.pace:1:6: error: expected a core count or "
                 "CLASS:COUNT after 'procs', found end of line");
    expect_error("procs 0\n", PM_ERANGE, "t.pace:1:7: error: core count must be at least 1, "
                 "found '0'");
    expect_error("procs dsp:0\n", PM_ERANGE, "t.pace:1:11: error: core count must be at least 1, "
                 "found '0'");
    expect_error("procs 4097\n", PM_ELIMIT, "t.pace:1:7: error: too many cores: 4097 (at most 4096)");
    expect_error("procs a:4000 b:97\n", PM_ELIMIT,
                 "t.pace:1:16: error: too many cores: 4097 (at most 4096)");
    expect_error("procs 4 dsp:2\n", PM_ESYNTAX, "t.pace:1:9: error: expected end of line, found 'dsp'");
    expect_error("procs dsp 2\n", PM_ESYNTAX, "t.pace:1:11: error: expected ':' after class "
                 "'dsp', found '2'");
    expect_error("procs dsp:x\n", PM_ESYNTAX, "t.pace:1:11: error: expected a whole number after "
                 "'dsp:', found 'x'");
    expect_error("procs 2x\n", PM_ESYNTAX, "t.pace:1:7: error: expected a core count or "
                 "CLASS:COUNT after 'procs', found '2x'");
    expect_error("procs dsp:1 dsp:2\n", PM_ENAME, "t.pace:1:13: error: class 'dsp' declared twice "
                 "in 'procs'");
    expect_error("procs dsp:2 4\n", PM_ESYNTAX, "t.pace:1:13: error: expected CLASS:COUNT or end "
                 "of line, found '4'");
    expect_error("procs d-sp:2\n", PM_ENAME, "t.pace:1:7: error: invalid class name 'd-sp' (names "
                 "use letters, digits, '_' and '.')");
    char text[1024] = "procs";
    for (int c = 0; c <= (int)READER_MAX_CLASSES; c++)
        snprintf(text + strlen(text), sizeof text - strlen(text), " c%d:1", c);
    expect_error(text, PM_ELIMIT, "t.pace:1:381: error: too many core classes (at most 64)");
}

static void test_comm_errors(void **state)
{
    (void)state;
    expect_error("comm latency=1 foo=2\n", PM_ESYNTAX, "t.pace:1:16: error: unknown key 'foo' for "
                 "'comm' (expected latency, per-word, send, recv, word-bytes or transfer)");
    expect_error("comm send=1 send=2\n", PM_ESYNTAX, "t.pace:1:13: error: key 'send' given twice");
    expect_error("comm latency 3\n", PM_ESYNTAX, "t.pace:1:14: error: expected '=' after "
                 "'latency', found '3'");
    expect_error("comm per-word=x\n", PM_ESYNTAX, "t.pace:1:15: error: expected a whole number "
                 "after 'per-word=', found 'x'");
    expect_error("comm 3\n", PM_ESYNTAX, "t.pace:1:6: error: expected key=value, found '3'");
}

static void test_node_errors(void **state)
{
    (void)state;
    expect_error("node 3\n", PM_ESYNTAX, "t.pace:1:6: error: expected a node name after 'node', "
                 "found '3'");
    expect_error("node a-b cycles=1\n", PM_ENAME, "t.pace:1:6: error: invalid node name 'a-b' "
                 "(names use letters, digits, '_' and '.')");
    expect_error("node a cycles=1\nnode a cycles=2\n", PM_ENAME,
                 "t.pace:2:6: error: duplicate node 'a' (first declared on line 1)");
    expect_error("node a\n", PM_ESYNTAX, "t.pace:1:6: error: missing key 'cycles' for node 'a'");
    expect_error("node a pin=0 work=spin\n", PM_ESYNTAX,
                 "t.pace:1:6: error: missing key 'cycles' for node 'a'");
    expect_error("node a cycles=,\n", PM_ESYNTAX, "t.pace:1:15: error: expected a number or "
                 "CLASS:NUMBER list after 'cycles=', found ','");
    expect_error("node a cycles=1 cycles=2\n", PM_ESYNTAX,
                 "t.pace:1:17: error: key 'cycles' given twice");
    expect_error("node a cycles=1 pin2=3\n", PM_ESYNTAX, "t.pace:1:17: error: unknown key 'pin2' "
                 "for 'node' (expected cycles, pin or work)");
    expect_error("node a cycles,1\n", PM_ESYNTAX,
                 "t.pace:1:14: error: expected '=' after 'cycles', found ','");
    expect_error("node a 40\n", PM_ESYNTAX, "t.pace:1:8: error: expected key=value, found '40'");
    expect_error("node a cycles=4611686018427387903\nnode b cycles=1\n", PM_ELIMIT,
                 "t.pace:2:15: error: the cycles of all nodes add up to more than "
                 "4611686018427387903");
    expect_error("procs x:1 y:1\nnode a cycles=x:4611686018427387903,y:1\nnode b cycles=y:1\n",
                 PM_ELIMIT, "t.pace:3:15: error: the cycles of all nodes add up to more than "
                 "4611686018427387903");
}

static void test_class_errors(void **state)
{
    (void)state;
    expect_error("node a cycles=dsp:4\n", PM_ENAME, "t.pace:1:15: error: unknown class 'dsp' "
                 "(declare core classes with a 'procs CLASS:COUNT' line before this node)");
    expect_error("procs 2\nnode a cycles=1 pin=dsp\n", PM_ENAME, "t.pace:2:21: error: unknown "
                 "class 'dsp' (declare core classes with a 'procs CLASS:COUNT' line before this "
                 "node)");
    expect_error("node a cycles=dsp:4\nprocs dsp:1\n", PM_ENAME, "t.pace:1:15: error: unknown "
                 "class 'dsp' (declare core classes with a 'procs CLASS:COUNT' line before this "
                 "node)");
    expect_error("\nprocs dsp:1\nnode a cycles=gpu:4\n", PM_ENAME,
                 "t.pace:3:15: error: unknown class 'gpu' (not in the 'procs' line on line 2)");
    expect_error("procs dsp:1\nnode a cycles=dsp:4,dsp:5\n", PM_ESYNTAX,
                 "t.pace:2:21: error: class 'dsp' given twice in 'cycles'");
    expect_error("procs dsp:1\nnode a cycles=dsp 4\n", PM_ESYNTAX,
                 "t.pace:2:19: error: expected ':' after class 'dsp', found '4'");
    expect_error("procs dsp:1\nnode a cycles=dsp:\n", PM_ESYNTAX,
                 "t.pace:2:19: error: expected a whole number after 'dsp:', found end of line");
    expect_error("procs dsp:1 host:1\nnode a cycles=dsp:4,\n", PM_ESYNTAX,
                 "t.pace:2:21: error: expected a class name after ',', found end of line");
    expect_error("node a cycles=1 pin=,\n", PM_ESYNTAX, "t.pace:1:21: error: expected a core "
                 "number or class name after 'pin=', found ','");
    expect_error("procs dsp:1 host:1\nnode a cycles=dsp:4 pin=host\nnode b cycles=host:1\n",
                 PM_EPLATFORM, "t.pace:2:25: error: node 'a' is pinned to class 'host', but has "
                 "no cycles for it");
    expect_error("procs dsp:1 host:1\nnode a pin=host cycles=dsp:4\nnode b cycles=host:1\n",
                 PM_EPLATFORM, "t.pace:2:12: error: node 'a' is pinned to class 'host', but has "
                 "no cycles for it");
}

static void test_work_errors(void **state)
{
    (void)state;
    expect_error("node a cycles=1 work=fast\n", PM_ESYNTAX, "t.pace:1:22: error: expected spin, "
                 "fir:TAPS, biquad:SECTIONS or fft:N after 'work=', found 'fast'");
    expect_error("node a cycles=1 work=fir\n", PM_ESYNTAX,
                 "t.pace:1:25: error: expected ':' after 'fir', found end of line");
    expect_error("node a cycles=1 work=fir:x\n", PM_ESYNTAX,
                 "t.pace:1:26: error: expected a whole number after 'fir:', found 'x'");
    expect_error("node a cycles=1 work=fir:0\n", PM_ERANGE,
                 "t.pace:1:26: error: fir taps must be from 1 to 65536, found '0'");
    expect_error("node a cycles=1 work=fir:65537\n", PM_ERANGE,
                 "t.pace:1:26: error: fir taps must be from 1 to 65536, found '65537'");
    expect_error("node a cycles=1 work=biquad:4097\n", PM_ERANGE,
                 "t.pace:1:29: error: biquad sections must be from 1 to 4096, found '4097'");
    expect_error("node a cycles=1 work=biquad:0\n", PM_ERANGE,
                 "t.pace:1:29: error: biquad sections must be from 1 to 4096, found '0'");
    expect_error("node a cycles=1 work=fft:100\n", PM_ERANGE, "t.pace:1:26: error: fft size must "
                 "be a power of two from 2 to 1048576, found '100'");
    expect_error("node a cycles=1 work=fft:1\n", PM_ERANGE, "t.pace:1:26: error: fft size must "
                 "be a power of two from 2 to 1048576, found '1'");
    expect_error("node a cycles=1 work=fft:2097152\n", PM_ERANGE, "t.pace:1:26: error: fft size "
                 "must be a power of two from 2 to 1048576, found '2097152'");
}

#define AB "node a cycles=1\nnode b cycles=1\n"

static void test_edge_errors(void **state)
{
    (void)state;
    expect_error(AB "edge 3\n", PM_ESYNTAX,
                 "t.pace:3:6: error: expected a node name after 'edge', found '3'");
    expect_error(AB "edge a b\n", PM_ESYNTAX,
                 "t.pace:3:8: error: expected '->' after 'a', found 'b'");
    expect_error(AB "edge a\n", PM_ESYNTAX,
                 "t.pace:3:7: error: expected '->' after 'a', found end of line");
    expect_error(AB "edge a ->\n", PM_ESYNTAX,
                 "t.pace:3:10: error: expected a node name after '->', found end of line");
    expect_error(AB "edge a -> b a\n", PM_ESYNTAX,
                 "t.pace:3:13: error: expected '->' or key=value after 'b', found 'a'");
    expect_error(AB "edge a -> b 4\n", PM_ESYNTAX,
                 "t.pace:3:13: error: expected key=value, found '4'");
    expect_error(AB "edge a -> mixr\n", PM_ENAME, "t.pace:3:11: error: unknown node 'mixr' "
                 "(declare it with 'node' before this edge)");
    expect_error("node a cycles=1\nedge a -> b\nnode b cycles=1\n", PM_ENAME,
                 "t.pace:2:11: error: unknown node 'b' (declare it with 'node' before this edge)");
    expect_error(AB "edge a -> b lag=1\n", PM_ESYNTAX, "t.pace:3:13: error: unknown key 'lag' "
                 "for 'edge' (expected delay, words, produce or consume)");
    expect_error(AB "edge a -> b delay=1 delay=2\n", PM_ESYNTAX,
                 "t.pace:3:21: error: key 'delay' given twice");
    expect_error(AB "edge a -> b words=x\n", PM_ESYNTAX,
                 "t.pace:3:19: error: expected a whole number after 'words=', found 'x'");
    expect_error(AB "edge a -> b produce=0\n", PM_ERANGE,
                 "t.pace:3:21: error: 'produce' must be at least 1, found '0'");
    expect_error(AB "edge a -> b consume=0\n", PM_ERANGE,
                 "t.pace:3:21: error: 'consume' must be at least 1, found '0'");
    expect_error(AB "edge a -> b -> a delay=2305843009213693952\n", PM_ELIMIT,
                 "t.pace:3:24: error: the delays of all edges add up to more than "
                 "4611686018427387903");
    expect_error(AB "edge a -> b delay=4611686018427387903\nedge b -> a delay=1\n", PM_ELIMIT,
                 "t.pace:4:19: error: the delays of all edges add up to more than "
                 "4611686018427387903");
}

/* An unknown name on an earlier edge line is reported before a later error,
 * although edge names are looked up in batches. */
static void test_error_order_with_batched_edges(void **state)
{
    (void)state;
    expect_error(AB "edge a -> x\nedge a b\n", PM_ENAME, "t.pace:3:11: error: unknown node 'x' "
                 "(declare it with 'node' before this edge)");
    expect_error(AB "edge a -> x\n$\n", PM_ENAME, "t.pace:3:11: error: unknown node 'x' "
                 "(declare it with 'node' before this edge)");
    expect_error(AB "edge a -> b\nedge a -> y -> b lag=1\n", PM_ENAME, "t.pace:4:11: error: "
                 "unknown node 'y' (declare it with 'node' before this edge)");
    expect_error(AB "edge a -> b\nedge a -> b lag=1\n", PM_ESYNTAX, "t.pace:4:13: error: "
                 "unknown key 'lag' for 'edge' (expected delay, words, produce or consume)");
    expect_error(AB "edge a -> b\nclock 1\n", PM_ESYNTAX, "t.pace:4:7: error: expected a "
                 "frequency with a unit (Hz, kHz, MHz or GHz) after 'clock', found '1'");
}

/* Node lines are stored in batches too: a duplicate is still reported at
 * its line, before any error on a later line, within a batch or across. */
static void test_error_order_with_batched_nodes(void **state)
{
    (void)state;
    expect_error("node a cycles=1\nnode a cycles=2\nnod\n", PM_ENAME,
                 "t.pace:2:6: error: duplicate node 'a' (first declared on line 1)");
    expect_error("node a cycles=1\nnode a cycles=dsp:1\n", PM_ENAME,
                 "t.pace:2:6: error: duplicate node 'a' (first declared on line 1)");
    expect_error("node a cycles=1\nnode b cycles=2\nnode a\n", PM_ENAME,
                 "t.pace:3:6: error: duplicate node 'a' (first declared on line 1)");
    size_t cap = 64 * 3000, len = 0;
    char *text = malloc(cap);
    assert_non_null(text);
    for (int v = 0; v < 2500; v++)
        len += (size_t)snprintf(text + len, cap - len, "node v%d cycles=1\n", v);
    snprintf(text + len, cap - len, "node v7 cycles=1\n");
    expect_error(text, PM_ENAME, "t.pace:2501:6: error: duplicate node 'v7' (first declared on "
                 "line 8)");
    snprintf(text + len, cap - len, "node v2400 cycles=1\n");
    expect_error(text, PM_ENAME, "t.pace:2501:6: error: duplicate node 'v2400' (first declared "
                 "on line 2401)");
    snprintf(text + len, cap - len, "edge v0 -> v2499 -> v1\nnode v2499 cycles=1\n");
    expect_error(text, PM_ENAME, "t.pace:2502:6: error: duplicate node 'v2499' (first declared "
                 "on line 2500)");
    free(text);
}

static void test_whole_file_errors(void **state)
{
    (void)state;
    expect_error("procs 2\nnode a cycles=1 pin=2\n", PM_EPLATFORM, "t.pace:2:21: error: node 'a' "
                 "is pinned to core 2, but the platform has only 2 cores");
    expect_error("node a cycles=1 pin=1\n", PM_EPLATFORM, "t.pace:1:21: error: node 'a' is "
                 "pinned to core 1, but the platform has only 1 core");
    expect_error("node a cycles=1 pin=4611686018427387903\nprocs 4\n", PM_EPLATFORM,
                 "t.pace:1:21: error: node 'a' is pinned to core 4611686018427387903, but the "
                 "platform has only 4 cores");
    expect_error("procs dsp:1 host:1\nnode a cycles=dsp:1 pin=1\nnode b cycles=host:1\n",
                 PM_EPLATFORM, "t.pace:2:25: error: node 'a' is pinned to core 1 of class 'host', "
                 "but has no cycles for it");
    expect_error("procs dsp:1 host:1\nnode a cycles=dsp:1\n", PM_EPLATFORM, "t.pace:1:13: error: "
                 "class 'host' can run no node (no node gives cycles for it)");
}

static void test_count_limits(void **state)
{
    (void)state;
    reader_limits lim = { 2, 3 };
    pm_graph *g = (pm_graph *)1;
    pm_diag d;
    char got[1200];
    const char *t1 = "node a cycles=1\nnode b cycles=1\nnode c cycles=1\n";
    int rc = reader_read_string_limited(t1, strlen(t1), "t.pace", &lim, &g, &d);
    diag_line(&d, got, sizeof got);
    assert_int_equal(rc, PM_ELIMIT);
    assert_null(g);
    assert_string_equal(got, "t.pace:3:6: error: too many nodes (at most 2)");
    const char *t2 = AB "edge a -> b -> a\nedge a -> b -> a\n";
    rc = reader_read_string_limited(t2, strlen(t2), "t.pace", &lim, &g, &d);
    diag_line(&d, got, sizeof got);
    assert_int_equal(rc, PM_ELIMIT);
    assert_string_equal(got, "t.pace:4:11: error: too many edges (at most 3)");
    const char *t3 = AB "edge a -> b -> a -> b\n";
    rc = reader_read_string_limited(t3, strlen(t3), "t.pace", &lim, &g, &d);
    assert_int_equal(rc, PM_OK);
    assert_int_equal(g->nedges, 3);
    pm_graph_destroy(g);
}

/* The batched lookup the reader uses gives what single lookups give, for
 * names of 8 bytes or less (recognised from the table slot), longer ones, and
 * names that share a prefix. */
static void test_find_many_matches_find(void **state)
{
    (void)state;
    static const char *const names[] = { "a", "ab", "abcdefg", "abcdefgh", "abcdefghi",
                                         "abcdefghij", "abcdefgi", "a_very_long_node_name.1",
                                         "a_very_long_node_name.2", "x9" };
    const size_t n = sizeof names / sizeof names[0];
    pm_graph *g = pm_graph_create("t");
    assert_non_null(g);
    for (size_t i = 0; i < n; i += 2) /* every other name is in the graph */
        assert_int_equal(pm_graph_add_node(g, names[i], strlen(names[i]), 1, NULL), PM_OK);
    for (int v = 0; v < 3000; v++) { /* enough to rehash several times */
        char buf[32];
        int len = snprintf(buf, sizeof buf, v % 2 ? "n%d" : "node_with_long_name_%d", v);
        assert_int_equal(pm_graph_add_node(g, buf, (size_t)len, 1, NULL), PM_OK);
    }
    const char *q[200];
    size_t lens[200];
    uint32_t ids[200];
    char store[200][32];
    for (size_t k = 0; k < 200; k++) {
        if (k < n) {
            q[k] = names[k];
        } else {
            int v = (int)(k * 37 % 3100); /* some beyond 3000: unknown */
            snprintf(store[k], sizeof store[k], v % 2 ? "n%d" : "node_with_long_name_%d", v);
            q[k] = store[k];
        }
        lens[k] = strlen(q[k]);
    }
    pm_graph_find_many(g, q, lens, 200, ids);
    int found = 0;
    for (size_t k = 0; k < 200; k++) {
        uint32_t one = pm_graph_find(g, q[k], lens[k]);
        assert_int_equal(ids[k], one);
        if (one != PM_NONE) {
            assert_string_equal(pm_graph_node_name(g, one), q[k]);
            found++;
        }
    }
    assert_true(found > 150 && found < 200);
    for (size_t i = 0; i < n; i++)
        assert_true((pm_graph_find(g, names[i], strlen(names[i])) != PM_NONE) == (i % 2 == 0));
    pm_graph_destroy(g);
}

/* ---- files --------------------------------------------------------------- */

static char *write_temp(const char *text, size_t len)
{
    char *path = strdup("/tmp/test_reader_XXXXXX");
    int fd = mkstemp(path);
    assert_true(fd >= 0);
    assert_true(write(fd, text, len) == (ssize_t)len);
    close(fd);
    return path;
}

static void test_file_errors(void **state)
{
    (void)state;
    pm_graph *g = (pm_graph *)1;
    pm_diag d;
    char got[1200];
    int rc = pm_reader_read_file("/nonexistent/x.pace", &g, &d);
    diag_line(&d, got, sizeof got);
    assert_int_equal(rc, PM_EIO);
    assert_null(g);
    assert_string_equal(got, "/nonexistent/x.pace:0:0: error: cannot open file: No such file "
                        "or directory");
    rc = pm_reader_read_file("/tmp", &g, &d);
    diag_line(&d, got, sizeof got);
    assert_int_equal(rc, PM_EIO);
    assert_string_equal(got, "/tmp:0:0: error: cannot read file: Is a directory");
    char *path = write_temp("node a cycles=1\n", 16);
    if (geteuid() != 0) { /* root reads anything */
        assert_int_equal(chmod(path, 0), 0);
        rc = pm_reader_read_file(path, &g, &d);
        assert_int_equal(rc, PM_EIO);
        assert_true(strstr(d.msg, "cannot open file: Permission denied") != NULL);
    }
    unlink(path);
    free(path);
}

/* A file bigger than the reader's 1 MiB piece: lines cross piece borders. */
static void test_big_file_matches_string(void **state)
{
    (void)state;
    size_t cap = 4u << 20, len = 0;
    char *text = malloc(cap);
    assert_non_null(text);
    for (int v = 0; v < 20000; v++)
        len += (size_t)snprintf(text + len, cap - len, "node node_number_%d cycles=%d\r\n", v, v);
    for (int e = 0; len + 200 < cap; e++)
        len += (size_t)snprintf(text + len, cap - len, "edge node_number_%d -> node_number_%d "
                                "delay=%d\n", e % 20000, (e * 7919) % 20000, e % 5);
    char *path = write_temp(text, len);
    pm_graph *a, *b;
    pm_diag d;
    assert_int_equal(pm_reader_read_file(path, &a, &d), PM_OK);
    assert_int_equal(pm_reader_read_string(text, len, path, &b, &d), PM_OK);
    assert_int_equal(a->nnodes, 20000);
    assert_int_equal(a->nedges, b->nedges);
    assert_true(a->nedges > 50000);
    for (uint32_t e = 0; e < a->nedges; e += 997) {
        assert_true(a->edges[e].src == (e % 20000) && a->edges[e].dst == (e * 7919) % 20000);
        assert_true(a->edges[e].delay == (int64_t)(e % 5) && b->edges[e].delay == a->edges[e].delay);
        assert_int_equal(a->edges[e].line, 20001 + e);
    }
    pm_graph_destroy(a);
    pm_graph_destroy(b);
    /* the same text with one overlong line near the end */
    memset(text + len - 100, '#', 99);
    char *tail = malloc(PM_READER_MAX_LINE + 10);
    memset(tail, 'x', PM_READER_MAX_LINE + 5);
    FILE *f = fopen(path, "ab");
    assert_non_null(f);
    fwrite(tail, 1, PM_READER_MAX_LINE + 5, f);
    fclose(f);
    assert_int_equal(pm_reader_read_file(path, &a, &d), PM_ELIMIT);
    assert_null(a);
    assert_int_equal(d.col, PM_READER_MAX_LINE + 1);
    assert_string_equal(d.msg, "line too long: more than 65536 bytes");
    unlink(path);
    free(path);
    free(tail);
    free(text);
}

/* ---- published reference scenarios --------------------------------------- */

/* Independent count: `node` lines, and the arrows of `edge` lines. */
static void count_lines(const char *path, uint32_t *nodes, uint32_t *edges)
{
    FILE *f = fopen(path, "r");
    char line[4096];
    *nodes = *edges = 0;
    assert_non_null(f);
    while (fgets(line, sizeof line, f)) {
        const char *s = line + strspn(line, " \t");
        if (strncmp(s, "node ", 5) == 0)
            (*nodes)++;
        if (strncmp(s, "edge ", 5) == 0)
            for (const char *p = strstr(s, "->"); p; p = strstr(p + 2, "->"))
                (*edges)++;
    }
    fclose(f);
}

static void test_refdata_scenarios(void **state)
{
    (void)state;
    const char *dir = getenv("PM_REFDATA");
    DIR *dp = dir ? opendir(dir) : NULL;
    if (!dp) {
        printf("note: PM_REFDATA unset or absent; reference scenarios skipped\n");
        skip();
    }
    int files = 0;
    for (struct dirent *de; (de = readdir(dp));) {
        size_t n = strlen(de->d_name);
        if (n < 6 || strcmp(de->d_name + n - 5, ".pace") != 0)
            continue;
        char path[4096];
        snprintf(path, sizeof path, "%s/%s", dir, de->d_name);
        pm_graph *g;
        pm_diag d;
        int rc = pm_reader_read_file(path, &g, &d);
        if (rc)
            print_error("%s:%u:%u: error: %s\n", d.file, d.line, d.col, d.msg);
        assert_int_equal(rc, PM_OK);
        uint32_t nodes, edges;
        count_lines(path, &nodes, &edges);
        assert_int_equal(g->nnodes, nodes);
        assert_int_equal(g->nedges, edges);
        pm_graph_destroy(g);
        files++;
    }
    closedir(dp);
    printf("read %d reference scenarios\n", files);
    assert_true(files > 0);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_title_clock_rate),
        cmocka_unit_test(test_defaults),
        cmocka_unit_test(test_procs_identical),
        cmocka_unit_test(test_procs_classes_and_per_class_cycles),
        cmocka_unit_test(test_comm_and_interconnect),
        cmocka_unit_test(test_work_kinds),
        cmocka_unit_test(test_edges_chain_and_attributes),
        cmocka_unit_test(test_line_endings_comments_blanks),
        cmocka_unit_test(test_limits_at_the_edge_are_fine),
        cmocka_unit_test(test_lexical_errors),
        cmocka_unit_test(test_name_and_line_limits),
        cmocka_unit_test(test_statement_errors),
        cmocka_unit_test(test_frequency_errors),
        cmocka_unit_test(test_procs_errors),
        cmocka_unit_test(test_comm_errors),
        cmocka_unit_test(test_node_errors),
        cmocka_unit_test(test_class_errors),
        cmocka_unit_test(test_work_errors),
        cmocka_unit_test(test_edge_errors),
        cmocka_unit_test(test_error_order_with_batched_edges),
        cmocka_unit_test(test_error_order_with_batched_nodes),
        cmocka_unit_test(test_whole_file_errors),
        cmocka_unit_test(test_count_limits),
        cmocka_unit_test(test_find_many_matches_find),
        cmocka_unit_test(test_file_errors),
        cmocka_unit_test(test_big_file_matches_string),
        cmocka_unit_test(test_refdata_scenarios),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
