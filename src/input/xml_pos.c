/* Raw-text positions for XML diagnostics (see xml_pos.h). Comments,
 * processing instructions, CDATA sections, the DOCTYPE and end tags are
 * skipped so that text inside them can never be taken for a tag. */
#include <stdlib.h>
#include <string.h>

#include "cairn/core.h"
#include "xml_pos.h"

int cairn_xpos_init(xpos *x, const char *text, size_t len)
{
    memset(x, 0, sizeof *x);
    if (len >= 3 && !memcmp(text, "\xef\xbb\xbf", 3)) {
        text += 3;
        len -= 3;
    }
    x->text = text;
    x->len = len;
    size_t cap = 0;
    for (size_t i = 0;;) {
        if (cairn_grow((void **)&x->lines, &cap, x->nlines + 1, sizeof *x->lines))
            return -1;
        x->lines[x->nlines++] = i;
        const char *nl = memchr(text + i, '\n', len - i);
        if (!nl)
            break;
        i = (size_t)(nl - text) + 1;
    }
    return 0;
}

void cairn_xpos_free(xpos *x)
{
    free(x->lines);
    x->lines = NULL;
}

void cairn_xpos_linecol(const xpos *x, size_t off, int *pline, int *pcol)
{
    size_t lo = 0, hi = x->nlines;
    while (hi - lo > 1) {
        size_t mid = (lo + hi) / 2;
        if (x->lines[mid] <= off) lo = mid;
        else hi = mid;
    }
    *pline = (int)lo + 1;
    *pcol = (int)(off - x->lines[lo]) + 1;
}

/* Offset just past the first occurrence of `pat` at or after i, or len. */
static size_t past(const xpos *x, size_t i, const char *pat)
{
    size_t n = strlen(pat);
    for (; i + n <= x->len; i++)
        if (!memcmp(x->text + i, pat, n))
            return i + n;
    return x->len;
}

static int starts(const xpos *x, size_t i, const char *pat)
{
    size_t n = strlen(pat);
    return i + n <= x->len && !memcmp(x->text + i, pat, n);
}

/* End of a tag or declaration starting at i: just past the '>' that is
 * outside quoted values (and, for a DOCTYPE, outside its [...] subset). */
static size_t tag_end(const xpos *x, size_t i)
{
    char q = 0;
    int depth = 0;
    for (i++; i < x->len; i++) {
        char ch = x->text[i];
        if (q) {
            if (ch == q) q = 0;
        } else if (ch == '"' || ch == '\'') {
            q = ch;
        } else if (ch == '[') {
            depth++;
        } else if (ch == ']') {
            depth--;
        } else if (ch == '>' && depth <= 0) {
            return i + 1;
        } else if (depth > 0 && starts(x, i, "<!--")) {
            i = past(x, i, "-->") - 1;
        }
    }
    return x->len;
}

/* Skip whatever markup starts at '<' at offset i that is not a start tag;
 * returns the offset after it, or i when it is a start tag. */
static size_t skip_markup(const xpos *x, size_t i)
{
    if (starts(x, i, "<!--")) return past(x, i + 4, "-->");
    if (starts(x, i, "<![CDATA[")) return past(x, i + 9, "]]>");
    if (starts(x, i, "<?")) return past(x, i + 2, "?>");
    if (starts(x, i, "<!") || starts(x, i, "</")) return tag_end(x, i);
    return i;
}

static int is_name_end(char ch)
{
    return ch == ' ' || ch == '\t' || ch == '\r' || ch == '\n' || ch == '/' || ch == '>';
}

int cairn_xpos_next_tag(xpos *x, const char *name, size_t *pstart, size_t *pend)
{
    size_t n = strlen(name);
    size_t i = x->cur;
    while (i < x->len) {
        const char *lt = memchr(x->text + i, '<', x->len - i);
        if (!lt)
            break;
        i = (size_t)(lt - x->text);
        size_t j = skip_markup(x, i);
        if (j != i) {
            i = j;
            continue;
        }
        /* Start tags in the raw text and elements in document order go in
         * step, so the element's tag is this one or none: a name that
         * differs (a namespace prefix, a document not in UTF-8) gives no
         * position, and the next element starts from the next tag. Never
         * searching further keeps the whole scan linear. */
        size_t end = tag_end(x, i);
        x->cur = end;
        if (i + 1 + n < x->len && !memcmp(x->text + i + 1, name, n) &&
            is_name_end(x->text[i + 1 + n])) {
            *pstart = i;
            *pend = end;
            return 0;
        }
        return -1;
    }
    x->cur = x->len;
    return -1;
}

size_t cairn_xpos_attr(const xpos *x, size_t start, size_t end, const char *attr)
{
    size_t n = strlen(attr);
    char q = 0;
    for (size_t i = start + 1; i < end; i++) {
        char ch = x->text[i];
        if (q) {
            if (ch == q) q = 0;
            continue;
        }
        if (ch == '"' || ch == '\'') {
            q = ch;
            continue;
        }
        int at_start = ch != ' ' && ch != '\t' && ch != '\r' && ch != '\n' &&
                       is_name_end(x->text[i - 1]);
        if (at_start && i + n <= end && !memcmp(x->text + i, attr, n)) {
            size_t k = i + n;
            while (k < end && (x->text[k] == ' ' || x->text[k] == '\t' ||
                               x->text[k] == '\r' || x->text[k] == '\n'))
                k++;
            if (k < end && x->text[k] == '=')
                return i;
        }
    }
    return (size_t)-1;
}

const char *cairn_xpos_forbidden(const xpos *x, size_t *poff)
{
    for (size_t i = 0; i < x->len; i++) {
        if (x->text[i] != '<')
            continue;
        if (starts(x, i, "<!--")) {
            i = past(x, i + 4, "-->") - 1;
        } else if (starts(x, i, "<![CDATA[")) {
            i = past(x, i + 9, "]]>") - 1;
        } else if (starts(x, i, "<!ENTITY")) {
            *poff = i;
            return "entity declarations are not allowed";
        } else if (starts(x, i, "<!DOCTYPE")) {
            /* <!DOCTYPE name SYSTEM "..."> or PUBLIC: an external DTD. */
            size_t k = i + 9;
            while (k < x->len && (x->text[k] == ' ' || x->text[k] == '\t' ||
                                  x->text[k] == '\r' || x->text[k] == '\n'))
                k++;
            while (k < x->len && !is_name_end(x->text[k]) && x->text[k] != '[')
                k++;
            while (k < x->len && (x->text[k] == ' ' || x->text[k] == '\t' ||
                                  x->text[k] == '\r' || x->text[k] == '\n'))
                k++;
            if (starts(x, k, "SYSTEM") || starts(x, k, "PUBLIC")) {
                *poff = i;
                return "external DTDs are not allowed";
            }
        }
    }
    return NULL;
}
