/*
 * lexer.c - tokens of one scenario line (docs/format.md, "Tokens").
 *
 * Turns the current line of a reader_state into tokens on demand: names,
 * integers, frequencies, strings, `->`, `=`, `,` and `:`.  A `#` outside a
 * string ends the line.  Tokens point into the line; integers are converted
 * here (with the 62-bit limit), frequencies and strings are only delimited
 * (their parse functions interpret them).  Lexical errors - NUL bytes, stray
 * carriage returns, bytes that start no token, unterminated strings, bad
 * escapes, too-long names, too-large integers - are reported with the column
 * of the offending byte.  It does not know statements or keys.
 */
#include "reader_internal.h"

#include "pacemap/reader.h"

#include <stdarg.h>
#include <stdio.h>
#ifdef __SSE2__
#include <emmintrin.h>
#endif

enum { CH_BLANK = 1, CH_START = 2, CH_NAME = 4, CH_DIGIT = 8, CH_ALPHA = 16 };

/* Byte classes (CH_* bits), one load per byte in the hot loops: blank =
 * space or tab, start = A-Za-z_, name = start + 0-9 and '.', digit, alpha. */
static const unsigned char lex_class[256] = {
     0,  0,  0,  0,  0,  0,  0,  0,  0,  1,  0,  0,  0,  0,  0,  0,
     0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,
     1,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  4,  0,
    12, 12, 12, 12, 12, 12, 12, 12, 12, 12,  0,  0,  0,  0,  0,  0,
     0, 22, 22, 22, 22, 22, 22, 22, 22, 22, 22, 22, 22, 22, 22, 22,
    22, 22, 22, 22, 22, 22, 22, 22, 22, 22, 22,  0,  0,  0,  0,  6,
     0, 22, 22, 22, 22, 22, 22, 22, 22, 22, 22, 22, 22, 22, 22, 22,
    22, 22, 22, 22, 22, 22, 22, 22, 22, 22, 22,  0,  0,  0,  0,  0,
     0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,
     0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,
     0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,
     0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,
     0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,
     0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,
     0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,
     0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,  0,
};

static bool lex_alpha(unsigned char c)
{
    return lex_class[c] & CH_ALPHA;
}

static bool lex_digit(unsigned char c)
{
    return lex_class[c] & CH_DIGIT;
}

static bool lex_start(unsigned char c)
{
    return lex_class[c] & CH_START;
}

static bool lex_namechar(unsigned char c)
{
    return lex_class[c] & CH_NAME;
}

static bool lex_blank(unsigned char c)
{
    return lex_class[c] & CH_BLANK;
}

static unsigned char lex_at(const reader_state *st, size_t i)
{
    return i < st->line_len ? (unsigned char)st->line[i] : 0;
}

/* Error for a byte that cannot appear where it is. */
static int lex_bad_byte(reader_state *st, size_t i)
{
    unsigned char c = (unsigned char)st->line[i];
    uint32_t col = (uint32_t)i + 1;
    if (c == '\0')
        return reader_fail(st, PM_ESYNTAX, col, "binary file: NUL byte");
    if (c == '\r')
        return reader_fail(st, PM_ESYNTAX, col,
                           "stray carriage return (lines end with LF or CR LF)");
    if (c > 0x20 && c < 0x7f)
        return reader_fail(st, PM_ESYNTAX, col, "unexpected character '%c'", c);
    return reader_fail(st, PM_ESYNTAX, col, "unexpected byte 0x%02x", c);
}

/* A comment runs to the end of the line; anything but NUL and CR may be in it. */
static int lex_comment(reader_state *st, size_t i)
{
    for (; i < st->line_len; i++) {
        char c = st->line[i];
        if (c == '\0' || c == '\r')
            return lex_bad_byte(st, i);
    }
    st->pos = st->line_len;
    st->tok.kind = TOK_END;
    return PM_OK;
}

#ifdef __SSE2__
/* Index of the first byte at or after i that cannot be in a name, looking
 * at 16 bytes per step while they lie inside the line: names end at
 * unpredictable places, and a byte loop pays a mispredicted branch for each. */
static size_t lex_name_end(const unsigned char *p, size_t i, size_t n)
{
    const __m128i a1 = _mm_set1_epi8('a' - 1), z1 = _mm_set1_epi8('z' + 1);
    const __m128i d1 = _mm_set1_epi8('0' - 1), d9 = _mm_set1_epi8('9' + 1);
    const __m128i lo = _mm_set1_epi8(0x20), us = _mm_set1_epi8('_'), dot = _mm_set1_epi8('.');
    for (; i + 16 <= n; i += 16) {
        __m128i c = _mm_loadu_si128((const __m128i *)(const void *)(p + i));
        __m128i l = _mm_or_si128(c, lo);
        __m128i ok = _mm_and_si128(_mm_cmpgt_epi8(l, a1), _mm_cmpgt_epi8(z1, l));
        ok = _mm_or_si128(ok, _mm_and_si128(_mm_cmpgt_epi8(c, d1), _mm_cmpgt_epi8(d9, c)));
        ok = _mm_or_si128(ok, _mm_or_si128(_mm_cmpeq_epi8(c, us), _mm_cmpeq_epi8(c, dot)));
        unsigned bad = ~(unsigned)_mm_movemask_epi8(ok) & 0xffffu;
        if (bad)
            return i + (size_t)__builtin_ctz(bad);
    }
    while (i < n && lex_namechar(p[i]))
        i++;
    return i;
}
#else
static size_t lex_name_end(const unsigned char *p, size_t i, size_t n)
{
    while (i < n && lex_namechar(p[i]))
        i++;
    return i;
}
#endif

static int lex_name(reader_state *st, size_t i)
{
    size_t s = i, n = st->line_len;
    const unsigned char *p = (const unsigned char *)st->line;
    for (;;) {
        i = lex_name_end(p, i, n);
        if (lex_at(st, i) == '-' && lex_start(lex_at(st, i + 1)))
            i++; /* per-word; never `->` */
        else
            break;
    }
    st->tok.kind = TOK_NAME;
    st->tok.len = i - s;
    st->pos = i;
    if (i - s > PM_READER_MAX_NAME)
        return reader_fail(st, PM_ELIMIT, st->tok.col, "name too long: %zu bytes (at most %d)",
                           i - s, PM_READER_MAX_NAME);
    return PM_OK;
}

/* number := digits ; frequency := digits ['.' digits] letters* (checked later) */
static int lex_number(reader_state *st, size_t i)
{
    size_t s = i;
    uint64_t v = 0;
    bool big = false;
    while (lex_digit(lex_at(st, i))) {
        v = v * 10 + (uint64_t)(st->line[i] - '0');
        big |= v > (uint64_t)PM_MAX_VALUE;
        if (big)
            v = (uint64_t)PM_MAX_VALUE; /* keep going to find the token's end */
        i++;
    }
    bool freq = lex_at(st, i) == '.' || lex_alpha(lex_at(st, i));
    if (lex_at(st, i) == '.')
        for (i++; lex_digit(lex_at(st, i)); i++)
            ;
    while (lex_alpha(lex_at(st, i)))
        i++;
    st->tok.kind = freq ? TOK_FREQ : TOK_INT;
    st->tok.len = i - s;
    st->tok.value = (int64_t)v;
    st->pos = i;
    if (!freq && big)
        return reader_fail(st, PM_ERANGE, st->tok.col, "number %s is too large (at most %lld)",
                           reader_found(st), (long long)PM_MAX_VALUE);
    return PM_OK;
}

/* string := '"' { char | '\"' | '\\' } '"' ; unescaped by the title parser */
static int lex_string(reader_state *st, size_t i)
{
    size_t s = i++;
    for (; i < st->line_len; i++) {
        unsigned char c = (unsigned char)st->line[i];
        if (c == '"') {
            st->tok.kind = TOK_STRING;
            st->tok.len = i + 1 - s;
            st->pos = i + 1;
            return PM_OK;
        }
        if ((c < 0x20 && c != '\t') || c == 0x7f)
            return lex_bad_byte(st, i);
        if (c == '\\') {
            unsigned char e = lex_at(st, i + 1);
            if (i + 1 >= st->line_len)
                break;
            if (e != '"' && e != '\\')
                return reader_fail(st, PM_ESYNTAX, (uint32_t)i + 1,
                                   "unknown escape in string (only \\\" and \\\\ are allowed)");
            i++;
        }
    }
    return reader_fail(st, PM_ESYNTAX, (uint32_t)s + 1,
                       "unterminated string (missing closing '\"')");
}

static int lex_punct(reader_state *st, size_t i, reader_tok_kind kind, size_t len)
{
    st->tok.kind = kind;
    st->tok.len = len;
    st->pos = i + len;
    return PM_OK;
}

/* '-' starts only `->`; a '-' before digits is a negative number, said plainly. */
static int lex_minus(reader_state *st, size_t i)
{
    if (lex_at(st, i + 1) == '>')
        return lex_punct(st, i, TOK_ARROW, 2);
    if (lex_digit(lex_at(st, i + 1))) {
        size_t e = i + 1;
        while (lex_namechar(lex_at(st, e)))
            e++;
        st->tok.len = e - i;
        return reader_fail(st, PM_ERANGE, (uint32_t)i + 1,
                           "negative value %s (values are whole numbers, 0 or more)",
                           reader_found(st));
    }
    return lex_bad_byte(st, i);
}

int reader_lex_next(reader_state *st)
{
    size_t i = st->pos;
    while (i < st->line_len && lex_blank((unsigned char)st->line[i]))
        i++;
    st->tok.col = (uint32_t)i + 1;
    st->tok.text = st->line + i;
    st->tok.len = 0;
    st->tok.value = 0;
    if (i >= st->line_len) {
        st->pos = i;
        st->tok.kind = TOK_END;
        return PM_OK;
    }
    unsigned char c = (unsigned char)st->line[i];
    if (lex_start(c))
        return lex_name(st, i);
    if (lex_digit(c))
        return lex_number(st, i);
    switch (c) {
    case '#': return lex_comment(st, i);
    case '"': return lex_string(st, i);
    case '=': return lex_punct(st, i, TOK_EQ, 1);
    case ',': return lex_punct(st, i, TOK_COMMA, 1);
    case ':': return lex_punct(st, i, TOK_COLON, 1);
    case '-': return lex_minus(st, i);
    default: return lex_bad_byte(st, i);
    }
}

bool reader_lex_eq_follows(const reader_state *st)
{
    size_t i = st->pos;
    while (i < st->line_len && lex_blank((unsigned char)st->line[i]))
        i++;
    return i < st->line_len && st->line[i] == '=';
}

int reader_fail(reader_state *st, int code, uint32_t col, const char *fmt, ...)
{
    if (st->rc)
        return st->rc; /* the first error is the one reported */
    char msg[sizeof st->diag->msg];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    pm_diag_set(st->diag, st->file, st->lineno, col, "%s", msg);
    st->rc = code;
    return code;
}

const char *reader_found(reader_state *st)
{
    const reader_tok *t = &st->tok;
    if (t->kind == TOK_END && t->len == 0)
        return "end of line";
    if (t->len > 40)
        snprintf(st->found, sizeof st->found, "'%.37s...'", t->text);
    else
        snprintf(st->found, sizeof st->found, "'%.*s'", (int)t->len, t->text);
    return st->found;
}
