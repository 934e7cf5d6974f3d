/* jsonread.c — recursive-descent JSON parser (RFC 8259) into a small tree. */
#include "core/core.h"
#include "core/jsonread.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* Nesting deeper than this is refused rather than risking the stack. */
#define JV_MAX_DEPTH 64

typedef struct {
    const char *p, *end, *start;
    char *err;
    size_t errlen;
    int failed;
    int oom;             /* the failure was running out of memory */
} parser;

static int line_of(const parser *ps)
{
    int line = 1;
    for (const char *q = ps->start; q < ps->p && q < ps->end; q++)
        line += *q == '\n';
    return line;
}

static void fail(parser *ps, const char *what)
{
    if (!ps->failed && ps->err)
        snprintf(ps->err, ps->errlen, "line %d: %s", line_of(ps), what);
    if (!ps->failed)
        ps->oom = !strcmp(what, "out of memory");
    ps->failed = 1;
}

static void skip_ws(parser *ps)
{
    while (ps->p < ps->end &&
           (*ps->p == ' ' || *ps->p == '\t' || *ps->p == '\n' || *ps->p == '\r'))
        ps->p++;
}

static int lit(parser *ps, const char *word)
{
    size_t k = strlen(word);
    if ((size_t)(ps->end - ps->p) >= k && memcmp(ps->p, word, k) == 0) {
        ps->p += k;
        return 1;
    }
    return 0;
}

static void put_utf8(char *out, size_t *len, unsigned cp)
{
    if (cp < 0x80) {
        out[(*len)++] = (char)cp;
    } else if (cp < 0x800) {
        out[(*len)++] = (char)(0xC0 | (cp >> 6));
        out[(*len)++] = (char)(0x80 | (cp & 0x3F));
    } else if (cp < 0x10000) {
        out[(*len)++] = (char)(0xE0 | (cp >> 12));
        out[(*len)++] = (char)(0x80 | ((cp >> 6) & 0x3F));
        out[(*len)++] = (char)(0x80 | (cp & 0x3F));
    } else {
        out[(*len)++] = (char)(0xF0 | (cp >> 18));
        out[(*len)++] = (char)(0x80 | ((cp >> 12) & 0x3F));
        out[(*len)++] = (char)(0x80 | ((cp >> 6) & 0x3F));
        out[(*len)++] = (char)(0x80 | (cp & 0x3F));
    }
}

static int hex4(parser *ps, unsigned *v)
{
    *v = 0;
    for (int i = 0; i < 4; i++) {
        if (ps->p >= ps->end)
            return 0;
        char c = *ps->p++;
        *v <<= 4;
        if (c >= '0' && c <= '9') *v |= (unsigned)(c - '0');
        else if (c >= 'a' && c <= 'f') *v |= (unsigned)(c - 'a' + 10);
        else if (c >= 'A' && c <= 'F') *v |= (unsigned)(c - 'A' + 10);
        else return 0;
    }
    return 1;
}

static char *parse_string(parser *ps)
{
    ps->p++; /* opening quote */
    const char *q = ps->p;
    while (q < ps->end && *q != '"')
        q += (*q == '\\') ? 2 : 1;
    if (q >= ps->end) {
        fail(ps, "unterminated string");
        return NULL;
    }
    char *out = sturdy_malloc((size_t)(q - ps->p) + 1);
    size_t len = 0;
    if (!out) {
        fail(ps, "out of memory");
        return NULL;
    }
    while (ps->p < q) {
        char c = *ps->p++;
        if ((unsigned char)c < 0x20) {
            fail(ps, "control character in string");
            sturdy_free(out);
            return NULL;
        }
        if (c != '\\') {
            out[len++] = c;
            continue;
        }
        char e = *ps->p++;
        unsigned cp;
        switch (e) {
        case '"': out[len++] = '"'; break;
        case '\\': out[len++] = '\\'; break;
        case '/': out[len++] = '/'; break;
        case 'b': out[len++] = '\b'; break;
        case 'f': out[len++] = '\f'; break;
        case 'n': out[len++] = '\n'; break;
        case 'r': out[len++] = '\r'; break;
        case 't': out[len++] = '\t'; break;
        case 'u':
            if (!hex4(ps, &cp)) {
                fail(ps, "bad \\u escape");
                sturdy_free(out);
                return NULL;
            }
            if (cp >= 0xD800 && cp < 0xDC00 && ps->p + 6 <= q && ps->p[0] == '\\' &&
                ps->p[1] == 'u') {
                unsigned lo;
                ps->p += 2;
                if (!hex4(ps, &lo) || lo < 0xDC00 || lo > 0xDFFF) {
                    fail(ps, "bad surrogate pair");
                    sturdy_free(out);
                    return NULL;
                }
                cp = 0x10000 + ((cp - 0xD800) << 10) + (lo - 0xDC00);
            }
            put_utf8(out, &len, cp); /* escapes never expand past their own length */
            break;
        default:
            fail(ps, "bad escape in string");
            sturdy_free(out);
            return NULL;
        }
    }
    ps->p = q + 1;
    out[len] = '\0';
    return out;
}

static int parse_value(parser *ps, jv *v, int depth);

static int parse_container(parser *ps, jv *v, int depth, int object)
{
    char close = object ? '}' : ']';
    size_t cap = 0;
    ps->p++;
    v->kind = object ? JV_OBJECT : JV_ARRAY;
    skip_ws(ps);
    if (ps->p < ps->end && *ps->p == close) {
        ps->p++;
        return 1;
    }
    for (;;) {
        if (v->n == cap) {
            cap = cap ? 2 * cap : 8;
            jv *items = sturdy_realloc(v->items, cap * sizeof *items);
            char **keys = object ? sturdy_realloc(v->keys, cap * sizeof *keys) : NULL;
            if (!items || (object && !keys)) {
                if (items) v->items = items;
                if (keys) v->keys = keys;
                fail(ps, "out of memory");
                return 0;
            }
            v->items = items;
            if (object)
                v->keys = keys;
        }
        skip_ws(ps);
        if (object) {
            if (ps->p >= ps->end || *ps->p != '"') {
                fail(ps, "expected a key string");
                return 0;
            }
            char *key = parse_string(ps);
            if (!key)
                return 0;
            v->keys[v->n] = key;
            skip_ws(ps);
            if (ps->p >= ps->end || *ps->p != ':') {
                memset(&v->items[v->n], 0, sizeof(jv));
                v->n++;
                fail(ps, "expected ':'");
                return 0;
            }
            ps->p++;
        }
        memset(&v->items[v->n], 0, sizeof(jv));
        v->n++;
        if (!parse_value(ps, &v->items[v->n - 1], depth + 1))
            return 0;
        skip_ws(ps);
        if (ps->p < ps->end && *ps->p == ',') {
            ps->p++;
            continue;
        }
        if (ps->p < ps->end && *ps->p == close) {
            ps->p++;
            return 1;
        }
        fail(ps, object ? "expected ',' or '}'" : "expected ',' or ']'");
        return 0;
    }
}

static int parse_value(parser *ps, jv *v, int depth)
{
    if (depth > JV_MAX_DEPTH) {
        fail(ps, "nested too deeply");
        return 0;
    }
    skip_ws(ps);
    if (ps->p >= ps->end) {
        fail(ps, "unexpected end of input");
        return 0;
    }
    char c = *ps->p;
    if (c == '{' || c == '[')
        return parse_container(ps, v, depth, c == '{');
    if (c == '"') {
        v->kind = JV_STRING;
        return (v->text = parse_string(ps)) != NULL;
    }
    if (lit(ps, "null")) { v->kind = JV_NULL; return 1; }
    if (lit(ps, "true")) { v->kind = JV_TRUE; return 1; }
    if (lit(ps, "false")) { v->kind = JV_FALSE; return 1; }
    const char *q = ps->p;
    if (q < ps->end && *q == '-') q++;
    const char *digits = q;
    while (q < ps->end && ((*q >= '0' && *q <= '9') || *q == '.' || *q == 'e' || *q == 'E' ||
                           *q == '+' || *q == '-'))
        q++;
    if (q == digits) {
        fail(ps, "unexpected character");
        return 0;
    }
    v->kind = JV_NUMBER;
    v->text = sturdy_malloc((size_t)(q - ps->p) + 1);
    if (!v->text) {
        fail(ps, "out of memory");
        return 0;
    }
    memcpy(v->text, ps->p, (size_t)(q - ps->p));
    v->text[q - ps->p] = '\0';
    char *end;
    strtod(v->text, &end);
    if (*end) {
        fail(ps, "malformed number");
        return 0;
    }
    ps->p = q;
    return 1;
}

static void jv_clear(jv *v)
{
    sturdy_free(v->text);
    for (size_t i = 0; i < v->n; i++) {
        jv_clear(&v->items[i]);
        if (v->keys)
            sturdy_free(v->keys[i]);
    }
    sturdy_free(v->items);
    sturdy_free(v->keys);
}

void jv_free(jv *v)
{
    if (!v)
        return;
    jv_clear(v);
    sturdy_free(v);
}

jv *jv_parse(const char *buf, size_t len, char *err, size_t errlen, int *oom)
{
    parser ps = {buf, buf + len, buf, err, errlen, 0, 0};
    jv *v = sturdy_calloc(1, sizeof *v);
    if (!v) {
        fail(&ps, "out of memory");
        if (oom) *oom = 1;
        return NULL;
    }
    if (parse_value(&ps, v, 0)) {
        skip_ws(&ps);
        if (ps.p != ps.end)
            fail(&ps, "text after the end of the document");
    }
    if (oom) *oom = ps.failed && ps.oom;
    if (ps.failed) {
        jv_free(v);
        return NULL;
    }
    return v;
}

const jv *jv_get(const jv *obj, const char *key)
{
    if (!obj || obj->kind != JV_OBJECT)
        return NULL;
    for (size_t i = 0; i < obj->n; i++)
        if (strcmp(obj->keys[i], key) == 0)
            return &obj->items[i];
    return NULL;
}

const jv *jv_at(const jv *arr, size_t i)
{
    if (!arr || arr->kind != JV_ARRAY || i >= arr->n)
        return NULL;
    return &arr->items[i];
}

double jv_double(const jv *v)
{
    if (!v || v->kind != JV_NUMBER)
        return NAN;
    return strtod(v->text, NULL);
}

uint64_t jv_u64(const jv *v, int *ok)
{
    *ok = 0;
    if (!v || v->kind != JV_NUMBER || !v->text[0])
        return 0;
    uint64_t x = 0;
    for (const char *s = v->text; *s; s++) {
        if (*s < '0' || *s > '9' || x > (UINT64_MAX - 9) / 10)
            return 0;
        x = x * 10 + (uint64_t)(*s - '0');
    }
    *ok = 1;
    return x;
}

const char *jv_str(const jv *v)
{
    return v && v->kind == JV_STRING ? v->text : NULL;
}
