/*
 * json.c - streaming JSON writer (see pacemap/json.h).
 */
#include "pacemap/json.h"
#include "pacemap/error.h"
#include "pacemap/graph.h"

#include <inttypes.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* Documents run to hundreds of megabytes (a schedule of a million nodes):
 * every byte goes through the stream's buffer without taking its lock, and
 * numbers are formatted here rather than through printf. */
#define JSON_PUT(c, out) putc_unlocked((c), (out))

static void json_write(FILE *out, const char *s, size_t n)
{
    if (n > 16) {
        fwrite_unlocked(s, 1, n, out);
        return;
    }
    for (size_t i = 0; i < n; i++) /* short: a call to fwrite costs more */
        JSON_PUT(s[i], out);
}

static bool json_plain(unsigned char c)
{
    return c >= 0x20 && c != '"' && c != '\\';
}

static void json_puts(FILE *out, const char *s)
{
    json_write(out, s, strlen(s));
}

/* Decimal digits of v, right-aligned in buf[0..24); the first digit. */
static char *json_digits(uint64_t v, char buf[24])
{
    char *p = buf + 24;
    do {
        *--p = (char)('0' + (int)(v % 10));
        v /= 10;
    } while (v);
    return p;
}

static void json_put_u64(FILE *out, uint64_t v, bool minus)
{
    char buf[24];
    char *p = json_digits(v, buf);
    if (minus)
        *--p = '-';
    json_write(out, p, (size_t)(buf + 24 - p));
}

void pm_json_init(pm_json *j, FILE *out, int indent)
{
    j->out = out;
    j->depth = 0;
    j->first[0] = true;
    j->after_key = false;
    j->indent = indent;
}

static void json_newline(pm_json *j)
{
    if (!j->indent)
        return;
    static const char spaces[] = "                                ";
    JSON_PUT('\n', j->out);
    for (int n = j->depth * j->indent; n > 0; n -= (int)sizeof spaces - 1)
        json_write(j->out, spaces, n < (int)sizeof spaces - 1 ? (size_t)n : sizeof spaces - 1);
}

/* Comma and indentation before a value or key at the current level. */
static void json_sep(pm_json *j)
{
    if (j->after_key) {
        j->after_key = false;
        return;
    }
    if (j->depth > 0) {
        if (!j->first[j->depth])
            JSON_PUT(',', j->out);
        json_newline(j);
    }
    j->first[j->depth] = false;
}

static void json_open(pm_json *j, char c)
{
    json_sep(j);
    JSON_PUT(c, j->out);
    if (j->depth + 1 < PM_JSON_MAX_DEPTH)
        j->depth++;
    j->first[j->depth] = true;
}

static void json_close(pm_json *j, char c)
{
    bool empty = j->first[j->depth];
    if (j->depth > 0)
        j->depth--;
    if (!empty)
        json_newline(j);
    JSON_PUT(c, j->out);
}

void pm_json_object_begin(pm_json *j) { json_open(j, '{'); }
void pm_json_object_end(pm_json *j) { json_close(j, '}'); }
void pm_json_array_begin(pm_json *j) { json_open(j, '['); }
void pm_json_array_end(pm_json *j) { json_close(j, ']'); }

/* The escape of byte c (RFC 8259) into buf, or 0 when c stands as is. */
static size_t json_escape(unsigned char c, char buf[8])
{
    static const char hex[] = "0123456789abcdef";
    const char *two = c == '"' ? "\\\"" : c == '\\' ? "\\\\" : c == '\n' ? "\\n"
                    : c == '\t' ? "\\t" : c == '\r' ? "\\r" : NULL;
    if (two) {
        memcpy(buf, two, 2);
        return 2;
    }
    if (c >= 0x20)
        return 0;
    memcpy(buf, "\\u00", 4);
    buf[4] = hex[c >> 4];
    buf[5] = hex[c & 15];
    return 6;
}

static void json_put_string(FILE *out, const char *s)
{
    JSON_PUT('"', out);
    const char *run = s; /* bytes that need no escape go out in one write */
    for (const char *p = s; *p; p++) {
        char esc[8];
        if (json_plain((unsigned char)*p))
            continue;
        size_t n = json_escape((unsigned char)*p, esc);
        json_write(out, run, (size_t)(p - run));
        json_write(out, esc, n);
        run = p + 1;
    }
    json_puts(out, run);
    JSON_PUT('"', out);
}

void pm_json_key(pm_json *j, const char *key)
{
    json_sep(j);
    json_put_string(j->out, key);
    json_puts(j->out, j->indent ? ": " : ":");
    j->after_key = true;
}

void pm_json_string(pm_json *j, const char *s)
{
    json_sep(j);
    json_put_string(j->out, s);
}

void pm_json_int(pm_json *j, int64_t v)
{
    json_sep(j);
    json_put_u64(j->out, v < 0 ? 0 - (uint64_t)v : (uint64_t)v, v < 0);
}

void pm_json_uint(pm_json *j, uint64_t v)
{
    json_sep(j);
    json_put_u64(j->out, v, false);
}

void pm_json_double(pm_json *j, double v)
{
    json_sep(j);
    if (isfinite(v))
        fprintf(j->out, "%.17g", v);
    else
        json_puts(j->out, "null");
}

void pm_json_bool(pm_json *j, bool v)
{
    json_sep(j);
    json_puts(j->out, v ? "true" : "false");
}

void pm_json_null(pm_json *j)
{
    json_sep(j);
    json_puts(j->out, "null");
}

void pm_json_rat(pm_json *j, pm_rat r)
{
    pm_json_object_begin(j);
    pm_json_key(j, "num");
    pm_json_int(j, r.num);
    pm_json_key(j, "den");
    pm_json_int(j, r.den);
    pm_json_key(j, "value");
    pm_json_double(j, pm_rat_to_double(r));
    pm_json_object_end(j);
}

void pm_json_finish(pm_json *j)
{
    JSON_PUT('\n', j->out);
    fflush(j->out);
}

/* Bytes name s takes as a JSON string, quotes included. */
static size_t json_string_size(const char *s)
{
    size_t n = 2;
    for (const unsigned char *p = (const unsigned char *)s; *p; p++) {
        char esc[8];
        size_t e = json_escape(*p, esc);
        n += e ? e : 1;
    }
    return n;
}

/* Name s as a JSON string at dst; the bytes written. */
static size_t json_string_copy(char *dst, const char *s)
{
    size_t n = 0;
    dst[n++] = '"';
    for (const unsigned char *p = (const unsigned char *)s; *p; p++) {
        size_t e = json_escape(*p, dst + n);
        if (e)
            n += e;
        else
            dst[n++] = (char)*p;
    }
    dst[n++] = '"';
    return n;
}

int pm_json_names_init(pm_json_names *t, const pm_graph *g)
{
    memset(t, 0, sizeof *t);
    size_t total = 0;
    for (uint32_t v = 0; v < g->nnodes; v++)
        total += json_string_size(pm_graph_node_name(g, v));
    t->off = malloc(((size_t)g->nnodes + 1) * sizeof *t->off);
    t->text = malloc(total + 8); /* an escape is built in place, up to 6 bytes */
    if (!t->off || !t->text) {
        pm_json_names_free(t);
        return PM_ENOMEM;
    }
    size_t at = 0;
    for (uint32_t v = 0; v < g->nnodes; v++) {
        t->off[v] = at;
        at += json_string_copy(t->text + at, pm_graph_node_name(g, v));
    }
    t->off[g->nnodes] = at;
    t->n = g->nnodes;
    return PM_OK;
}

void pm_json_names_free(pm_json_names *t)
{
    free(t->text);
    free(t->off);
    memset(t, 0, sizeof *t);
}

void pm_json_name(pm_json *j, const pm_json_names *t, uint32_t v)
{
    json_sep(j);
    json_write(j->out, t->text + t->off[v], t->off[v + 1] - t->off[v]);
}
