/* The text field book (FORMAT.md "The field book"): one record a line,
 * blanks between words, double quotes around a word with blanks, `#` to
 * the end of the line a comment.
 *
 * Speed matters (a million-line book should load in about a second), so
 * the whole file is read with one fread, each line is split in place in
 * one reused buffer, and nothing is allocated per line beyond the net's
 * own arrays. */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "input_int.h"

#define MAX_WORDS 128
#define SHOW(s) cairn_in_show((s), show, sizeof show)

typedef struct {
    char *s;
    int col;
} word;

typedef struct {
    in_ctx *c;
    char *buf;      /* the current line, split in place */
    char *join;     /* joined multi-word standard deviations */
    size_t njoin;
    word w[MAX_WORDS];
    int nw;
    in_field f[MAX_WORDS];
    int line;
} fb_state;

static int is_blank(char ch)
{
    return ch == ' ' || ch == '\t' || ch == '\r' || ch == '\v' || ch == '\f';
}

/* Split the line (already copied into st->buf, NUL-terminated) into words.
 * A word opening with '"' runs to the next '"' and may hold blanks and '#';
 * elsewhere a '"' is an ordinary character, so `2"` (two arc-seconds)
 * needs no quoting. */
static int split(fb_state *st, size_t len)
{
    char *b = st->buf;
    size_t i = 0;
    st->nw = 0;
    while (i < len) {
        while (i < len && is_blank(b[i]))
            i++;
        if (i >= len || b[i] == '#')
            break;
        if (st->nw == MAX_WORDS)
            return cairn_in_err(st->c, st->line, (int)i + 1, "more than %d words on one line",
                                MAX_WORDS);
        word *w = &st->w[st->nw++];
        w->col = (int)i + 1;
        if (b[i] == '"') {
            char *q = memchr(b + i + 1, '"', len - i - 1);
            if (!q)
                return cairn_in_err(st->c, st->line, (int)i + 1, "unterminated quote");
            w->s = b + i + 1;
            *q = '\0';
            i = (size_t)(q - b) + 1;
            if (i < len && !is_blank(b[i]) && b[i] != '#')
                return cairn_in_err(st->c, st->line, (int)i + 1,
                                    "a blank must follow the closing quote, not '%c'",
                                    (b[i] > 0x20 && b[i] < 0x7f) ? b[i] : '?');
        } else {
            w->s = b + i;
            while (i < len && !is_blank(b[i]) && b[i] != '#')
                i++;
            int comment = i < len && b[i] == '#';
            b[i] = '\0';
            i++;
            if (comment)
                break;
        }
    }
    return 0;
}

/* Keywords whose value is a standard deviation or tolerance: these may be
 * written with blanks and no quotes ("distance 1 mm + 1.5 ppm"). */
static int is_sd_key(const char *k)
{
    static const char *const keys[] = {"direction", "zenith", "distance", "centring",
                                       "height", "per-km", "per-setup", "sd-en", "sd-h",
                                       "sd", "hz-sd", "zen-sd", "dist-sd", "tolerance",
                                       "loop-allowance", NULL};
    for (int i = 0; keys[i]; i++)
        if (!strcmp(k, keys[i]))
            return 1;
    return 0;
}

static int is_unit_word(const char *w)
{
    static const char *const u[] = {"mm", "cm", "m", "ft", "usft", "sec", "\"", "mgon",
                                    "cc", "ppm", NULL};
    if (!strchr("mcfus\"p", w[0]))
        return 0;
    for (int i = 0; u[i]; i++)
        if (!strcmp(w, u[i]))
            return 1;
    return 0;
}

static int could_continue(const char *prev, const char *next)
{
    size_t pl = strlen(prev);
    char last = pl ? prev[pl - 1] : '\0';
    return last == '+' || next[0] == '+' ||
           (((last >= '0' && last <= '9') || last == '.') && is_unit_word(next));
}

/* The value of an sd keyword starting at word i: the word itself, or it
 * and the following words while they continue a unit sum. Returns the
 * number of words used and the value in *pval. */
static int sd_value(fb_state *st, int i, const char **pval)
{
    int n = 1;
    const char *first = st->w[i].s;
    for (;;) {
        if (i + n >= st->nw)
            break;
        if (!could_continue(st->w[i + n - 1].s, st->w[i + n].s))
            break;
        n++;
    }
    if (n == 1) {
        *pval = first;
        return 1;
    }
    char *out = st->join + st->njoin;
    size_t k = 0;
    for (int j = 0; j < n; j++) {
        size_t l = strlen(st->w[i + j].s);
        if (j)
            out[k++] = ' ';
        memcpy(out + k, st->w[i + j].s, l);
        k += l;
    }
    out[k++] = '\0';
    st->njoin += k;
    *pval = out;
    return n;
}

/* Build a record from positional words (named `pos`) then keyword/value
 * pairs. */
static int build(fb_state *st, in_rec *r, const char *const *pos, const char *usage)
{
    int npos = 0, nf = 0;
    while (pos[npos])
        npos++;
    r->name = st->w[0].s;
    r->line = st->line;
    r->col = st->w[0].col;
    r->f = st->f;
    if (st->nw - 1 < npos)
        return cairn_in_err(st->c, st->line, st->w[0].col, "%s record needs %s", r->name, usage);
    for (int k = 0; k < npos; k++) {
        in_field *f = &st->f[nf++];
        f->key = pos[k];
        f->line = st->line;
        f->val = st->w[1 + k].s;
        f->kcol = f->vcol = st->w[1 + k].col;
    }
    for (int i = 1 + npos; i < st->nw;) {
        in_field *f = &st->f[nf++];
        f->key = st->w[i].s;
        f->line = st->line;
        f->kcol = st->w[i].col;
        if (i + 1 >= st->nw) { /* cairn_in_match reports it, after unknown keywords */
            f->val = NULL;
            f->vcol = f->kcol;
            break;
        }
        f->vcol = st->w[i + 1].col;
        /* Only a value followed by a unit or '+' can run on (cheap test
         * first: this is the hot loop of a large book). */
        if (i + 2 < st->nw && could_continue(st->w[i + 1].s, st->w[i + 2].s) &&
            is_sd_key(f->key)) {
            i += 1 + sd_value(st, i + 1, &f->val);
        } else {
            f->val = st->w[i + 1].s;
            i += 2;
        }
    }
    r->nf = nf;
    return 0;
}

static int rec_text(fb_state *st)
{
    in_ctx *c = st->c;
    const char *what = st->w[0].s;
    if (st->nw < 2)
        return cairn_in_err(c, st->line, st->w[0].col, "%s needs text", what);
    char *out = st->join + st->njoin;
    size_t k = 0;
    for (int j = 1; j < st->nw; j++) {
        size_t l = strlen(st->w[j].s);
        if (j > 1)
            out[k++] = ' ';
        memcpy(out + k, st->w[j].s, l);
        k += l;
    }
    out[k] = '\0';
    return cairn_in_rec_text(c, st->line, st->w[1].col, what, out);
}

static int rec_include(fb_state *st)
{
    in_ctx *c = st->c;
    char path[CAIRN_PATH_MAX], show[64];
    if (st->nw != 2)
        return cairn_in_err(c, st->line, st->w[0].col,
                            st->nw < 2 ? "fieldbook needs a file name"
                                 : "fieldbook takes one file name (quote a name with blanks)");
    const word *w = &st->w[1];
    if (!cairn_in_utf8_valid(w->s, strlen(w->s)) || !w->s[0])
        return cairn_in_err(c, st->line, w->col, "fieldbook: '%s' is not a file name",
                      SHOW(w->s));
    if (cairn_in_join_path(c->file, w->s, path, sizeof path))
        return cairn_in_err(c, st->line, w->col, "fieldbook: path too long");
    if (c->depth + 1 > CAIRN_INCLUDE_MAX)
        return cairn_in_err(c, st->line, w->col, "field books nested more than %d deep",
                            CAIRN_INCLUDE_MAX);
    if (cairn_error_full(c->err))
        return -1; /* stop reading: the error list is full */
    return cairn_in_fieldbook_load(c->net, c->err, path, c->depth + 1, 0, c->lu, c->au, c,
                                   st->line, w->col);
}

static int record(fb_state *st)
{
    static const char *const p_id[] = {"id", NULL};
    static const char *const p_at[] = {"at", NULL};
    static const char *const p_to[] = {"to", NULL};
    static const char *const p_units[] = {"length", "angle", NULL};
    static const char *const p_angle[] = {"at", "from", "to", "value", NULL};
    static const char *const p_ftv[] = {"from", "to", "value", NULL};
    in_ctx *c = st->c;
    in_rec r;
    char show[64];
    const char *k = st->w[0].s;
    st->njoin = 0;
    if (!strcmp(k, "to")) {
        if (build(st, &r, p_to, "a mark id"))
            return -1;
        return cairn_in_rec_sight(c, &r);
    }
    if (!strcmp(k, "at")) {
        if (build(st, &r, p_at, "a mark id")) {
            c->setup = -2;
            return -1;
        }
        return cairn_in_rec_setup(c, &r);
    }
    if (!strcmp(k, "mark"))
        return build(st, &r, p_id, "an id") ? -1 : cairn_in_rec_mark(c, &r);
    if (!strcmp(k, "angle"))
        return build(st, &r, p_angle, "AT FROM TO VALUE") ? -1 : cairn_in_rec_angle(c, &r);
    if (!strcmp(k, "azimuth"))
        return build(st, &r, p_ftv, "FROM TO VALUE") ? -1 : cairn_in_rec_azimuth(c, &r);
    if (!strcmp(k, "rise"))
        return build(st, &r, p_ftv, "FROM TO VALUE") ? -1 : cairn_in_rec_rise(c, &r);
    if (!strcmp(k, "instrument"))
        return build(st, &r, p_id, "an id") ? -1 : cairn_in_rec_instrument(c, &r);
    if (!strcmp(k, "units")) {
        if (st->nw != 3)
            return cairn_in_err(c, st->line, st->w[0].col,
                                "units needs a length unit and an angle unit (e.g. units m dms)");
        return build(st, &r, p_units, "") ? -1 : cairn_in_rec_units(c, &r, c->top);
    }
    if (!strcmp(k, "option")) {
        if (st->nw < 3)
            return cairn_in_err(c, st->line, st->w[0].col,
                                st->nw < 2 ? "option needs a name and a value"
                                     : "option %s needs a value",
                                st->nw < 2 ? "" : SHOW(st->w[1].s));
        in_field f = {st->w[1].s, NULL, st->line, st->w[1].col, st->w[2].col};
        int used = is_sd_key(f.key) ? sd_value(st, 2, &f.val) : (f.val = st->w[2].s, 1);
        if (2 + used < st->nw) {
            char show_key[64];
            return cairn_in_err(c, st->line, st->w[2 + used].col,
                                "unexpected '%s' after the value of option %s",
                                SHOW(st->w[2 + used].s),
                                cairn_in_show(f.key, show_key, sizeof show_key));
        }
        r.name = "option";
        r.line = st->line;
        r.col = st->w[0].col;
        r.f = &f;
        r.nf = 1;
        return cairn_in_rec_option(c, &r, &f);
    }
    if (!strcmp(k, "title") || !strcmp(k, "description"))
        return rec_text(st);
    if (!strcmp(k, "fieldbook"))
        return rec_include(st);
    return cairn_in_err(c, st->line, st->w[0].col, "unknown record keyword '%s'", SHOW(k));
}

int cairn_in_fieldbook_text(in_ctx *c, const char *text, size_t len)
{
    int before = c->err->nerrors;
    fb_state st;
    memset(&st, 0, sizeof st);
    st.c = c;
    st.buf = malloc(2 * (size_t)CAIRN_LINE_MAX + 4);
    if (!st.buf)
        return cairn_in_err(c, 0, 0, "out of memory");
    st.join = st.buf + CAIRN_LINE_MAX + 2;
    /* A UTF-8 byte order mark is not data; columns count from after it. */
    if (len >= 3 && !memcmp(text, "\xef\xbb\xbf", 3)) {
        text += 3;
        len -= 3;
    }
    const char *p = text, *end = text + len;
    while (p < end) {
        const char *nl = memchr(p, '\n', (size_t)(end - p));
        const char *eol = nl ? nl : end;
        size_t n = (size_t)(eol - p);
        st.line++;
        if (n && p[n - 1] == '\r')
            n--;
        if (n > CAIRN_LINE_MAX) {
            cairn_in_err(c, st.line, CAIRN_LINE_MAX + 1, "line is longer than %d bytes",
                         CAIRN_LINE_MAX);
        } else {
            const char *nul = memchr(p, '\0', n);
            if (nul) {
                cairn_in_err(c, st.line, (int)(nul - p) + 1, "NUL byte in the line");
            } else {
                memcpy(st.buf, p, n);
                st.buf[n] = '\0';
                if (!split(&st, n) && st.nw)
                    record(&st);
            }
        }
        p = nl ? nl + 1 : end;
    }
    free(st.buf);
    return c->err->nerrors > before ? -1 : 0;
}

int cairn_in_fieldbook_load(cairn_net *net, cairn_error *err, const char *path, int depth,
                            int top, cairn_length_unit lu, cairn_angle_unit au,
                            const in_ctx *inc, int line, int col)
{
    struct stat sb;
    in_ctx c;
    char show[64];
    memset(&c, 0, sizeof c);
    c.net = net;
    c.err = err;
    c.file = inc ? inc->file : path;
    int eline = inc ? line : 0, ecol = inc ? col : 0;
    if (stat(path, &sb))
        return cairn_in_err(&c, eline, ecol, "cannot read field book '%s': %s", SHOW(path),
                            strerror(errno));
    if (S_ISDIR(sb.st_mode))
        return cairn_in_err(&c, eline, ecol, "cannot read field book '%s': it is a directory",
                            SHOW(path));
    /* A FIFO or a terminal would block for ever, a device may never end. */
    if (inc && !S_ISREG(sb.st_mode))
        return cairn_in_err(&c, eline, ecol,
                            "cannot read field book '%s': not a regular file", SHOW(path));
    for (const in_open *o = inc ? inc->open : NULL; o; o = o->parent)
        if (o->dev == sb.st_dev && o->ino == sb.st_ino)
            return cairn_in_err(&c, eline, ecol,
                                "field book '%s' includes itself (an include cycle)", SHOW(path));
    /* Read from two places, a book would count its observations twice (and
     * books that include the next one many times would be read
     * exponentially often). Compared by device and inode, as above. */
    for (size_t i = 0; i < net->nfiles; i++) {
        struct stat ob;
        if (!stat(net->files[i], &ob) && ob.st_dev == sb.st_dev && ob.st_ino == sb.st_ino) {
            char shown[64];
            return cairn_in_err(&c, eline, ecol,
                                "field book '%s' is read a second time (already read as '%s'); "
                                "its observations would count twice",
                                SHOW(path), cairn_in_show(net->files[i], shown, sizeof shown));
        }
    }
    char *text;
    size_t len;
    if (cairn_in_read_file(path, &text, &len))
        return cairn_in_err(&c, eline, ecol, "cannot read field book '%s': %s", SHOW(path),
                      strerror(errno));
    const char *name = cairn_net_file(net, path);
    if (!name) {
        free(text);
        return cairn_in_err(&c, eline, ecol, "out of memory");
    }
    in_open me = {sb.st_dev, sb.st_ino, inc ? inc->open : NULL};
    c.file = name;
    c.depth = depth;
    c.top = top;
    c.lu = lu;
    c.au = au;
    c.setup = -1;
    c.open = &me;
    int rc = cairn_in_fieldbook_text(&c, text, len);
    free(text);
    return rc;
}

int cairn_load_fieldbook(cairn_net *net, const char *path, int depth, cairn_error *err)
{
    return cairn_in_fieldbook_load(net, err, path, depth, depth == 0, net->length_unit,
                                   net->angle_unit, NULL, 0, 0);
}

int cairn_parse_fieldbook(cairn_net *net, const char *name, const char *text, size_t len,
                          int depth, cairn_error *err)
{
    in_ctx c;
    memset(&c, 0, sizeof c);
    c.net = net;
    c.err = err;
    c.file = cairn_net_file(net, name);
    c.depth = depth;
    c.top = depth == 0;
    c.lu = net->length_unit;
    c.au = net->angle_unit;
    c.setup = -1;
    if (!c.file)
        return cairn_error_add(err, CAIRN_SEV_ERROR, name, 0, 0, "out of memory");
    return cairn_in_fieldbook_text(&c, text, len);
}
