/*
 * json.c - streaming JSON writer (see pacemap/json.h).
 */
#include "pacemap/json.h"

#include <inttypes.h>
#include <math.h>

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
    fputc('\n', j->out);
    for (int i = 0; i < j->depth * j->indent; i++)
        fputc(' ', j->out);
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
            fputc(',', j->out);
        json_newline(j);
    }
    j->first[j->depth] = false;
}

static void json_open(pm_json *j, char c)
{
    json_sep(j);
    fputc(c, j->out);
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
    fputc(c, j->out);
}

void pm_json_object_begin(pm_json *j) { json_open(j, '{'); }
void pm_json_object_end(pm_json *j) { json_close(j, '}'); }
void pm_json_array_begin(pm_json *j) { json_open(j, '['); }
void pm_json_array_end(pm_json *j) { json_close(j, ']'); }

static void json_put_string(FILE *out, const char *s)
{
    fputc('"', out);
    for (const unsigned char *p = (const unsigned char *)s; *p; p++) {
        switch (*p) {
        case '"': fputs("\\\"", out); break;
        case '\\': fputs("\\\\", out); break;
        case '\n': fputs("\\n", out); break;
        case '\t': fputs("\\t", out); break;
        case '\r': fputs("\\r", out); break;
        default:
            if (*p < 0x20)
                fprintf(out, "\\u%04x", *p);
            else
                fputc(*p, out);
        }
    }
    fputc('"', out);
}

void pm_json_key(pm_json *j, const char *key)
{
    json_sep(j);
    json_put_string(j->out, key);
    fputs(j->indent ? ": " : ":", j->out);
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
    fprintf(j->out, "%" PRId64, v);
}

void pm_json_uint(pm_json *j, uint64_t v)
{
    json_sep(j);
    fprintf(j->out, "%" PRIu64, v);
}

void pm_json_double(pm_json *j, double v)
{
    json_sep(j);
    if (isfinite(v))
        fprintf(j->out, "%.17g", v);
    else
        fputs("null", j->out);
}

void pm_json_bool(pm_json *j, bool v)
{
    json_sep(j);
    fputs(v ? "true" : "false", j->out);
}

void pm_json_null(pm_json *j)
{
    json_sep(j);
    fputs("null", j->out);
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
    fputc('\n', j->out);
    fflush(j->out);
}
