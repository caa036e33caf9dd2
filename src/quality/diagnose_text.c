/* Re-reading the booked text of a value from its source line.
 *
 * The net keeps values in SI only, but the digit hypotheses (transposed,
 * dropped, repeated digits, a moved decimal point) are about the string
 * the surveyor wrote, so the string is read again from obs->src. The
 * splitting repeats the field-book rules (FORMAT.md, DEVELOPERS.md
 * "Quotes in field books") rather than sharing the input stage's code:
 * the input stage splits in place for speed and keeps no text, and the
 * quality stage may not reach back into it (DESIGN.md: a stage uses only
 * the stages to its left, through their headers). */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cairn/diagnose.h"
#include "diagnose_int.h"

#define MAX_WORDS 128

static int is_blank(char ch)
{
    return ch == ' ' || ch == '\t' || ch == '\r' || ch == '\v' || ch == '\f' || ch == '\n';
}

static int put(const char *s, size_t len, char *buf, size_t n)
{
    if (len + 1 > n || len == 0)
        return -1;
    memcpy(buf, s, len);
    buf[len] = '\0';
    return 0;
}

/* The key a reading of kind k is booked under. */
static const char *default_key(cairn_obs_kind k)
{
    switch (k) {
    case CAIRN_OBS_DIRECTION: return "hz";
    case CAIRN_OBS_ZENITH: return "zen";
    case CAIRN_OBS_SLOPE: return "slope";
    case CAIRN_OBS_HORIZ: return "horiz";
    default: return "value";
    }
}

/* ---- field books ------------------------------------------------------ */

typedef struct {
    const char *s[MAX_WORDS];
    size_t len[MAX_WORDS];
    int col[MAX_WORDS];
    int n;
} words;

/* Split one line as the field-book parser does: blanks separate words, a
 * word opening with '"' runs to the next '"', '#' outside quotes starts a
 * comment. Columns are 1-based bytes. */
static void split(const char *b, size_t len, words *w)
{
    size_t i = 0;
    w->n = 0;
    while (i < len && w->n < MAX_WORDS) {
        while (i < len && is_blank(b[i]))
            i++;
        if (i >= len || b[i] == '#')
            break;
        int k = w->n++;
        w->col[k] = (int)i + 1;
        if (b[i] == '"') {
            const char *q = memchr(b + i + 1, '"', len - i - 1);
            size_t e = q ? (size_t)(q - b) : len;
            w->s[k] = b + i + 1;
            w->len[k] = e - i - 1;
            i = e + 1;
        } else {
            size_t st = i;
            while (i < len && !is_blank(b[i]) && b[i] != '#')
                i++;
            w->s[k] = b + st;
            w->len[k] = i - st;
        }
    }
}

static int word_is(const words *w, int i, const char *s)
{
    return i < w->n && w->len[i] == strlen(s) && !memcmp(w->s[i], s, w->len[i]);
}

/* Positional place of the value in records that take it by position:
 * "angle AT FROM TO VALUE", "azimuth FROM TO VALUE", "rise FROM TO VALUE". */
static int positional(cairn_obs_kind k)
{
    return k == CAIRN_OBS_ANGLE ? 4 : (k == CAIRN_OBS_AZIMUTH || k == CAIRN_OBS_RISE) ? 3 : 0;
}

static int from_fieldbook_line(const cairn_obs *o, const char *key, const char *line,
                               size_t len, char *buf, size_t n)
{
    words w;
    split(line, len, &w);
    int r0 = 0; /* the record keyword, or the reading's keyword, at src.col */
    for (int i = 0; i < w.n; i++)
        if (w.col[i] == o->src.col)
            r0 = i;
    int pos = positional(o->kind);
    if (!strcmp(key, "value") && pos) {
        /* src.col is the record keyword; the value follows by position. */
        if (w.n && (word_is(&w, r0, "angle") || word_is(&w, r0, "azimuth") ||
                    word_is(&w, r0, "rise")))
            return r0 + pos < w.n ? put(w.s[r0 + pos], w.len[r0 + pos], buf, n) : -1;
        if (w.n > pos)
            return put(w.s[pos], w.len[pos], buf, n);
        return -1;
    }
    if (word_is(&w, r0, key) && r0 + 1 < w.n)
        return put(w.s[r0 + 1], w.len[r0 + 1], buf, n);
    /* Keywords follow "to ID"; an id equal to a keyword sits at 1. */
    for (int i = 2; i + 1 < w.n; i++)
        if (word_is(&w, i, key))
            return put(w.s[i + 1], w.len[i + 1], buf, n);
    return -1;
}

/* ---- XML -------------------------------------------------------------- */

/* The value of attribute `key` in the tag around offset off of text. A '<'
 * cannot occur unescaped in an attribute value (XML 1.0, AttValue), so the
 * tag starts at the last '<' at or before off. */
static int from_xml(const char *t, size_t len, size_t off, const char *key, char *buf,
                    size_t n)
{
    if (off >= len)
        return -1;
    size_t s = off;
    while (s > 0 && t[s] != '<')
        s--;
    if (t[s] != '<')
        return -1;
    size_t kl = strlen(key);
    char q = 0;
    for (size_t i = s + 1; i < len; i++) {
        char ch = t[i];
        if (q) {
            if (ch == q)
                q = 0;
            continue;
        }
        if (ch == '"' || ch == '\'') {
            q = ch;
            continue;
        }
        if (ch == '>')
            return -1;
        if (!is_blank(t[i - 1]) || i + kl >= len || memcmp(t + i, key, kl))
            continue;
        size_t k = i + kl;
        while (k < len && is_blank(t[k]))
            k++;
        if (k >= len || t[k] != '=')
            continue;
        k++;
        while (k < len && is_blank(t[k]))
            k++;
        if (k >= len || (t[k] != '"' && t[k] != '\''))
            return -1;
        const char *e = memchr(t + k + 1, t[k], len - k - 1);
        if (!e || memchr(t + k + 1, '&', (size_t)(e - t) - k - 1))
            return -1; /* unterminated, or an entity we do not decode */
        return put(t + k + 1, (size_t)(e - t) - k - 1, buf, n);
    }
    return -1;
}

/* Offset of (line, col) in text; col 0 means the line's start. Columns
 * count from after a byte order mark, as the loader's do. */
static size_t offset_of(const char *t, size_t len, int line, int col)
{
    size_t i = 0;
    for (int l = 1; l < line && i < len; l++) {
        const char *nl = memchr(t + i, '\n', len - i);
        if (!nl)
            return len;
        i = (size_t)(nl - t) + 1;
    }
    return i + (size_t)(col > 0 ? col - 1 : 0);
}

static int read_all(FILE *f, char **pt, size_t *plen)
{
    size_t cap = 65536, len = 0;
    char *t = malloc(cap);
    while (t) {
        len += fread(t + len, 1, cap - len, f);
        if (len < cap)
            break;
        char *g = realloc(t, cap * 2);
        if (!g) {
            free(t);
            t = NULL;
            break;
        }
        t = g;
        cap *= 2;
    }
    *pt = t;
    *plen = len;
    return t && !ferror(f) ? 0 : -1;
}

int cairn_booked_text(const cairn_obs *o, const char *key, char *buf, size_t n)
{
    if (!buf || n == 0)
        return -1;
    buf[0] = '\0';
    if (!o || !o->src.file || o->src.line <= 0)
        return -1;
    if (!key)
        key = default_key(o->kind);
    FILE *f = fopen(o->src.file, "rb");
    if (!f)
        return -1;
    /* XML or field book: the loader decides by the first non-blank
     * character (input.h); so do we. */
    char head[4096];
    size_t hn = fread(head, 1, sizeof head, f);
    size_t h = (hn >= 3 && !memcmp(head, "\xef\xbb\xbf", 3)) ? 3 : 0;
    size_t bom = h;
    while (h < hn && is_blank(head[h]))
        h++;
    int xml = h < hn && head[h] == '<';
    rewind(f);
    int rc = -1;
    if (xml) {
        char *t;
        size_t len;
        if (!read_all(f, &t, &len)) {
            size_t off = offset_of(t + bom, len - bom, o->src.line, o->src.col);
            rc = from_xml(t + bom, len - bom, off, key, buf, n);
        }
        free(t);
    } else {
        char *line = NULL;
        size_t cap = 0;
        ssize_t got = 0;
        for (int l = 1; l <= o->src.line && (got = getline(&line, &cap, f)) >= 0; l++)
            ;
        if (got >= 0 && line) {
            size_t len = (size_t)got;
            const char *s = line;
            if (o->src.line == 1 && len >= 3 && !memcmp(s, "\xef\xbb\xbf", 3)) {
                s += 3;
                len -= 3;
            }
            while (len && (s[len - 1] == '\n' || s[len - 1] == '\r'))
                len--;
            rc = from_fieldbook_line(o, key, s, len, buf, n);
        }
        free(line);
    }
    fclose(f);
    if (rc)
        buf[0] = '\0';
    return rc;
}

/* ---- the same through a cache of whole files ---------------------------- */

void cairn_text_cache_clear(cairn_text_cache *tc)
{
    if (!tc)
        return;
    for (int i = 0; i < tc->n; i++) {
        free(tc->f[i].path);
        free(tc->f[i].text);
        free(tc->f[i].line);
    }
    memset(tc, 0, sizeof *tc);
}

/* Read path whole and index its lines (what getline would return one by
 * one: each ends after its '\n', the last possibly without one). */
static void load_file(const char *path, cairn_text_file *tf)
{
    memset(tf, 0, sizeof *tf);
    size_t pl = strlen(path);
    tf->path = malloc(pl + 1);
    if (!tf->path)
        return;
    memcpy(tf->path, path, pl + 1);
    FILE *f = fopen(path, "rb");
    if (!f)
        return;
    char *t = NULL;
    size_t len = 0;
    int bad = read_all(f, &t, &len);
    fclose(f);
    if (bad) {
        free(t);
        return;
    }
    /* XML or field book, decided as cairn_booked_text does (first 4096 bytes) */
    size_t hn = len < 4096 ? len : 4096;
    size_t h = (hn >= 3 && !memcmp(t, "\xef\xbb\xbf", 3)) ? 3 : 0;
    tf->bom = h;
    while (h < hn && is_blank(t[h]))
        h++;
    tf->xml = h < hn && t[h] == '<';
    if (!tf->xml) {
        size_t nl = 0;
        for (const char *q = t; len && (q = memchr(q, '\n', len - (size_t)(q - t))); q++)
            nl++;
        tf->line = malloc((nl + 1) * sizeof *tf->line);
        if (!tf->line) {
            free(t);
            return;
        }
        size_t k = 0, i = 0;
        while (i < len) {
            tf->line[k++] = i;
            const char *q = memchr(t + i, '\n', len - i);
            i = q ? (size_t)(q - t) + 1 : len;
        }
        tf->nline = k;
    }
    tf->text = t;
    tf->len = len;
}

static const cairn_text_file *cached_file(cairn_text_cache *tc, const char *path)
{
    for (int i = 0; i < tc->n; i++)
        if (!strcmp(tc->f[i].path ? tc->f[i].path : "", path))
            return tc->f[i].path ? &tc->f[i] : NULL;
    int slot;
    if (tc->n < CAIRN_TEXT_CACHE_FILES) {
        slot = tc->n++;
    } else {
        slot = tc->next;
        tc->next = (tc->next + 1) % CAIRN_TEXT_CACHE_FILES;
        free(tc->f[slot].path);
        free(tc->f[slot].text);
        free(tc->f[slot].line);
    }
    load_file(path, &tc->f[slot]);
    return tc->f[slot].path ? &tc->f[slot] : NULL;
}

int cairn_booked_text_cached(const cairn_obs *o, const char *key, char *buf, size_t n,
                             cairn_text_cache *tc)
{
    if (!tc)
        return cairn_booked_text(o, key, buf, n);
    if (!buf || n == 0)
        return -1;
    buf[0] = '\0';
    if (!o || !o->src.file || o->src.line <= 0)
        return -1;
    if (!key)
        key = default_key(o->kind);
    const cairn_text_file *tf = cached_file(tc, o->src.file);
    if (!tf)   /* out of memory for the path: read afresh */
        return cairn_booked_text(o, key, buf, n);
    if (!tf->text)
        return -1;
    int rc = -1;
    if (tf->xml) {
        size_t off = offset_of(tf->text + tf->bom, tf->len - tf->bom, o->src.line, o->src.col);
        rc = from_xml(tf->text + tf->bom, tf->len - tf->bom, off, key, buf, n);
    } else if ((size_t)o->src.line <= tf->nline) {
        size_t a = tf->line[o->src.line - 1];
        size_t b = (size_t)o->src.line < tf->nline ? tf->line[o->src.line] : tf->len;
        const char *s = tf->text + a;
        size_t len = b - a;
        if (o->src.line == 1 && len >= 3 && !memcmp(s, "\xef\xbb\xbf", 3)) {
            s += 3;
            len -= 3;
        }
        while (len && (s[len - 1] == '\n' || s[len - 1] == '\r'))
            len--;
        rc = from_fieldbook_line(o, key, s, len, buf, n);
    }
    if (rc)
        buf[0] = '\0';
    return rc;
}
