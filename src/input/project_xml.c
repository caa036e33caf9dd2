/* The XML project file (FORMAT.md "The project file"), read with libxml2.
 *
 * Safety: the parser runs with XML_PARSE_NONET and without NOENT, DTDLOAD
 * or DTDATTR, so it fetches nothing and expands no entity; on top of that
 * a document that declares an entity or names an external DTD is refused
 * before libxml2 sees it. A parser context of our own carries the errors
 * (no global error handler is touched). Every element becomes an in_rec
 * for the same handlers the field book uses. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <libxml/parser.h>
#include <libxml/tree.h>

#include "input_int.h"
#include "xml_pos.h"

#define MAX_ATTRS 32

/* Raw position of one element's start tag, hung on node->_private. */
typedef struct {
    size_t start, end;
    int line, col;
} tagpos;

typedef struct {
    in_ctx *c;
    xmlDocPtr doc;
    xpos *x;
    tagpos *pos;
    size_t npos, cap;
    int nunits, noptions, ntitle, ndesc;
} xml_state;

static void where(const xml_state *st, xmlNodePtr n, int *pline, int *pcol)
{
    const tagpos *p = n->_private;
    if (p) {
        *pline = p->line;
        *pcol = p->col;
    } else {
        *pline = (int)xmlGetLineNo(n);
        *pcol = 0;
    }
}

/* Pass 1: the raw position of every element, in document order. */
static int locate(xml_state *st, xmlNodePtr n)
{
    for (; n; n = n->next) {
        if (n->type != XML_ELEMENT_NODE)
            continue;
        if (cairn_grow((void **)&st->pos, &st->cap, st->npos + 1, sizeof *st->pos))
            return -1;
        size_t s, e;
        /* One entry per element, found or not (line 0), so that attach
         * pairs each element with its own tag. */
        tagpos *p = &st->pos[st->npos++];
        memset(p, 0, sizeof *p);
        if (!cairn_xpos_next_tag(st->x, (const char *)n->name, &s, &e)) {
            p->start = s;
            p->end = e;
            cairn_xpos_linecol(st->x, s, &p->line, &p->col);
        }
        if (locate(st, n->children))
            return -1;
    }
    return 0;
}

/* Hang positions on nodes only after pass 1, since st->pos may move. */
static void attach(xml_state *st, xmlNodePtr n, size_t *k)
{
    for (; n; n = n->next) {
        if (n->type != XML_ELEMENT_NODE)
            continue;
        n->_private = *k < st->npos && st->pos[*k].line ? &st->pos[*k] : NULL;
        (*k)++;
        attach(st, n->children, k);
    }
}

/* Build a record from an element's attributes; values are libxml2
 * strings, released by free_rec. */
static int make_rec(xml_state *st, xmlNodePtr n, in_rec *r, in_field *f)
{
    in_ctx *c = st->c;
    const tagpos *p = n->_private;
    r->name = (const char *)n->name;
    where(st, n, &r->line, &r->col);
    r->f = f;
    r->nf = 0;
    for (xmlAttrPtr a = n->properties; a; a = a->next) {
        /* p:id="..." is not our id: the format uses no namespaces. */
        if (a->ns)
            return cairn_in_err(c, r->line, r->col, "unknown attribute '%s%s%s' on <%s>",
                                a->ns->prefix ? (const char *)a->ns->prefix : "",
                                a->ns->prefix ? ":" : "", a->name, r->name);
        if (r->nf == MAX_ATTRS)
            return cairn_in_err(c, r->line, r->col, "more than %d attributes on <%s>", MAX_ATTRS,
                                r->name);
        in_field *g = &f[r->nf++];
        g->key = (const char *)a->name;
        xmlChar *v = xmlNodeListGetString(st->doc, a->children, 1);
        if (!v)
            v = xmlStrdup((const xmlChar *)""); /* an empty value has no text node */
        if (!v) {
            r->nf--;
            return cairn_in_err(c, r->line, r->col, "out of memory");
        }
        g->val = (const char *)v;
        g->line = r->line;
        g->kcol = g->vcol = r->col;
        size_t off = p ? cairn_xpos_attr(st->x, p->start, p->end, g->key) : (size_t)-1;
        if (off != (size_t)-1) {
            cairn_xpos_linecol(st->x, off, &g->line, &g->kcol);
            g->vcol = g->kcol;
        }
    }
    return 0;
}

static void free_rec(in_rec *r)
{
    for (int i = 0; i < r->nf; i++)
        xmlFree((void *)r->f[i].val);
    r->nf = 0;
}

static int is_blank_text(const xmlChar *s)
{
    for (; s && *s; s++)
        if (*s != ' ' && *s != '\t' && *s != '\r' && *s != '\n')
            return 0;
    return 1;
}

/* Elements other than <cairn-project> and <setup> hold no elements, and
 * only <title> and <description> hold text. */
static int check_content(xml_state *st, xmlNodePtr n, int text_ok, const char *child_ok)
{
    int rc = 0, line, col;
    for (xmlNodePtr k = n->children; k; k = k->next) {
        if (k->type == XML_ELEMENT_NODE) {
            if (child_ok && !strcmp((const char *)k->name, child_ok))
                continue;
            where(st, k, &line, &col);
            rc = cairn_in_err(st->c, line, col, "<%s> is not allowed inside <%s>", k->name,
                              n->name);
        } else if (k->type == XML_ENTITY_REF_NODE) {
            where(st, n, &line, &col);
            rc = cairn_in_err(st->c, line, col, "entity references are not allowed");
        } else if ((k->type == XML_TEXT_NODE || k->type == XML_CDATA_SECTION_NODE) &&
                   !text_ok && !is_blank_text(k->content)) {
            line = (int)xmlGetLineNo(k);
            rc = cairn_in_err(st->c, line, 0, "unexpected text in <%s>", n->name);
        }
    }
    return rc;
}

static int once(xml_state *st, xmlNodePtr n, int *count)
{
    int line, col;
    if (++*count == 1)
        return 0;
    where(st, n, &line, &col);
    return cairn_in_err(st->c, line, col, "<%s> may appear only once", n->name);
}

/* <title>, <description>: text with runs of blanks made one blank, as a
 * field book joins the words of a title line. */
static int text_elem(xml_state *st, xmlNodePtr n, in_rec *r)
{
    if (r->nf)
        return cairn_in_err(st->c, r->f[0].line, r->f[0].kcol, "unknown attribute '%s' on <%s>",
                            r->f[0].key, r->name);
    if (check_content(st, n, 1, NULL))
        return -1;
    xmlChar *t = xmlNodeGetContent(n);
    if (!t)
        return cairn_in_err(st->c, r->line, r->col, "out of memory");
    char *s = (char *)t, *o = s;
    for (char *p = s; *p; p++) {
        int blank = *p == ' ' || *p == '\t' || *p == '\r' || *p == '\n';
        if (blank) {
            if (o > s && o[-1] != ' ')
                *o++ = ' ';
        } else {
            *o++ = *p;
        }
    }
    if (o > s && o[-1] == ' ')
        o--;
    *o = '\0';
    int rc = *s ? cairn_in_rec_text(st->c, r->line, r->col, r->name, s)
                : cairn_in_err(st->c, r->line, r->col, "<%s> is empty", r->name);
    xmlFree(t);
    return rc;
}

static int include(xml_state *st, const in_rec *r)
{
    static const char *const keys[] = {"file", NULL};
    const in_field *f[1];
    char path[CAIRN_PATH_MAX];
    in_ctx *c = st->c;
    if (cairn_in_match(c, r, keys, f))
        return -1;
    if (!f[0])
        return cairn_in_err(c, r->line, r->col, "<fieldbook> needs a file attribute");
    if (!f[0]->val[0] || !cairn_in_utf8_valid(f[0]->val, strlen(f[0]->val)))
        return cairn_in_err(c, f[0]->line, f[0]->kcol, "file: not a file name");
    if (cairn_in_join_path(c->file, f[0]->val, path, sizeof path))
        return cairn_in_err(c, f[0]->line, f[0]->kcol, "file: path too long");
    if (cairn_error_full(c->err))
        return -1;
    return cairn_in_fieldbook_load(c->net, c->err, path, c->depth + 1, 0, c->lu, c->au, c,
                                   f[0]->line, f[0]->kcol);
}

static int element(xml_state *st, xmlNodePtr n);

/* The format uses no XML namespaces: <x:mark> or a default namespace is
 * someone else's vocabulary, not ours read under another name. */
static int no_ns(xml_state *st, xmlNodePtr n)
{
    int line, col;
    char show[64];
    if (!n->ns)
        return 0;
    where(st, n, &line, &col);
    return cairn_in_err(st->c, line, col,
                        "<%s%s%s> is in the XML namespace '%s'; a cairn project uses none",
                        n->ns->prefix ? (const char *)n->ns->prefix : "",
                        n->ns->prefix ? ":" : "", n->name,
                        cairn_in_show(n->ns->href ? (const char *)n->ns->href : "", show,
                                      sizeof show));
}

static int setup_elem(xml_state *st, xmlNodePtr n, const in_rec *r)
{
    int rc = check_content(st, n, 0, "sight");
    if (cairn_in_rec_setup(st->c, r))
        rc = -1;
    for (xmlNodePtr k = n->children; k; k = k->next) {
        if (k->type != XML_ELEMENT_NODE || strcmp((const char *)k->name, "sight"))
            continue;
        in_field f[MAX_ATTRS];
        in_rec sr;
        sr.nf = 0;
        if (no_ns(st, k) || make_rec(st, k, &sr, f) || check_content(st, k, 0, NULL) ||
            cairn_in_rec_sight(st->c, &sr))
            rc = -1;
        free_rec(&sr);
    }
    st->c->setup = -1; /* a sight belongs inside its <setup> */
    return rc;
}

static int element(xml_state *st, xmlNodePtr n)
{
    in_ctx *c = st->c;
    in_field f[MAX_ATTRS];
    in_rec r;
    const char *name = (const char *)n->name;
    int rc;
    if (no_ns(st, n))
        return -1;
    if (make_rec(st, n, &r, f)) {
        free_rec(&r);
        return -1;
    }
    if (!strcmp(name, "setup")) {
        rc = setup_elem(st, n, &r);
    } else if (!strcmp(name, "title")) {
        rc = once(st, n, &st->ntitle) ? -1 : text_elem(st, n, &r);
    } else if (!strcmp(name, "description")) {
        rc = once(st, n, &st->ndesc) ? -1 : text_elem(st, n, &r);
    } else if (!strcmp(name, "units")) {
        rc = 0; /* read before everything else */
    } else if (!strcmp(name, "sight")) {
        rc = cairn_in_err(c, r.line, r.col, "<sight> must be inside a <setup>");
    } else {
        static const char *const known[] = {"options", "instrument", "mark", "angle",
                                            "azimuth", "rise", "fieldbook", NULL};
        int k = 0;
        while (known[k] && strcmp(known[k], name))
            k++;
        if (!known[k]) {
            rc = cairn_in_err(c, r.line, r.col, "unknown element <%s>", name);
        } else if (check_content(st, n, 0, NULL)) {
            rc = -1;
        } else {
            switch (k) {
            case 0: rc = once(st, n, &st->noptions) ? -1 : cairn_in_rec_options(c, &r); break;
            case 1: rc = cairn_in_rec_instrument(c, &r); break;
            case 2: rc = cairn_in_rec_mark(c, &r); break;
            case 3: rc = cairn_in_rec_angle(c, &r); break;
            case 4: rc = cairn_in_rec_azimuth(c, &r); break;
            case 5: rc = cairn_in_rec_rise(c, &r); break;
            default: rc = include(st, &r); break;
            }
        }
    }
    free_rec(&r);
    return rc;
}

static int root_elem(xml_state *st, xmlNodePtr root)
{
    in_ctx *c = st->c;
    in_field f[MAX_ATTRS];
    in_rec r;
    static const char *const keys[] = {"format", NULL};
    const in_field *pf[1];
    char show[64];
    int rc = 0, line, col;
    if (no_ns(st, root))
        return -1;
    if (strcmp((const char *)root->name, "cairn-project")) {
        where(st, root, &line, &col);
        return cairn_in_err(c, line, col, "the root element must be <cairn-project>, not <%s>",
                            root->name);
    }
    if (make_rec(st, root, &r, f) || cairn_in_match(c, &r, keys, pf)) {
        free_rec(&r);
        return -1;
    }
    if (!pf[0])
        rc = cairn_in_err(c, r.line, r.col, "<cairn-project> needs format=\"1\"");
    else if (strcmp(pf[0]->val, "1"))
        rc = cairn_in_err(c, pf[0]->line, pf[0]->kcol,
                          "format: this program reads format 1, not '%s'",
                          cairn_in_show(pf[0]->val, show, sizeof show));
    free_rec(&r);
    if (rc)
        return rc;
    /* Values anywhere in the file are in the project units, so <units> is
     * read first wherever it stands. */
    for (xmlNodePtr n = root->children; n; n = n->next) {
        if (n->type != XML_ELEMENT_NODE || strcmp((const char *)n->name, "units"))
            continue;
        if (once(st, n, &st->nunits) || make_rec(st, n, &r, f) ||
            check_content(st, n, 0, NULL) || cairn_in_rec_units(c, &r, 1))
            rc = -1;
        free_rec(&r);
    }
    for (xmlNodePtr n = root->children; n; n = n->next) {
        if (n->type == XML_ELEMENT_NODE) {
            if (element(st, n))
                rc = -1;
        } else if (n->type == XML_ENTITY_REF_NODE) {
            rc = cairn_in_err(c, (int)xmlGetLineNo(n), 0, "entity references are not allowed");
        } else if ((n->type == XML_TEXT_NODE || n->type == XML_CDATA_SECTION_NODE) &&
                   !is_blank_text(n->content)) {
            rc = cairn_in_err(c, (int)xmlGetLineNo(n), 0, "unexpected text in <cairn-project>");
        }
    }
    return rc;
}

static int xml_error(in_ctx *c, xmlParserCtxtPtr p)
{
    const xmlError *e = xmlCtxtGetLastError(p);
    char msg[CAIRN_MSG_MAX - 32];
    snprintf(msg, sizeof msg, "%s", e && e->message ? e->message : "not well-formed");
    size_t n = strlen(msg);
    while (n && (msg[n - 1] == '\n' || msg[n - 1] == ' '))
        msg[--n] = '\0';
    /* One diagnostic is one line: libxml2's messages may hold newlines
     * ("... indicate encoding !\nBytes: 0x..."), and a cut may split a
     * UTF-8 sequence. */
    for (size_t i = 0; i < n; i++)
        if ((unsigned char)msg[i] < 0x20 || msg[i] == 0x7f)
            msg[i] = ' ';
    if (!cairn_in_utf8_valid(msg, n))
        for (size_t i = 0; i < n; i++)
            if ((unsigned char)msg[i] >= 0x80)
                msg[i] = '?';
    return cairn_in_err(c, e ? e->line : 0, e && e->line ? e->int2 : 0, "malformed XML: %s",
                        msg);
}

int cairn_in_xml_parse(cairn_net *net, const char *name, const char *text, size_t len,
                       const in_open *me, cairn_error *err)
{
    in_ctx c;
    xpos x;
    int before = err->nerrors;
    memset(&c, 0, sizeof c);
    c.net = net;
    c.err = err;
    c.xml = 1;
    c.setup = -1;
    c.open = me;
    c.lu = CAIRN_LENGTH_M;
    c.au = CAIRN_ANGLE_DMS;
    c.file = cairn_net_file(net, name);
    if (!c.file)
        return cairn_error_add(err, CAIRN_SEV_ERROR, name, 0, 0, "out of memory");
    if (len > (size_t)0x7fffffff)
        return cairn_in_err(&c, 0, 0, "project file too large");
    if (cairn_xpos_init(&x, text, len)) {
        cairn_xpos_free(&x);
        return cairn_in_err(&c, 0, 0, "out of memory");
    }
    size_t off;
    const char *why = cairn_xpos_forbidden(&x, &off);
    if (why) {
        int line, col;
        cairn_xpos_linecol(&x, off, &line, &col);
        cairn_xpos_free(&x);
        return cairn_in_err(&c, line, col, "%s", why);
    }
    xmlParserCtxtPtr p = xmlNewParserCtxt();
    if (!p) {
        cairn_xpos_free(&x);
        return cairn_in_err(&c, 0, 0, "out of memory");
    }
    xmlDocPtr doc = xmlCtxtReadMemory(p, text, (int)len, name, NULL,
                                      XML_PARSE_NONET | XML_PARSE_NOERROR |
                                          XML_PARSE_NOWARNING);
    if (!doc || !p->wellFormed) {
        xml_error(&c, p);
    } else if (doc->intSubset && doc->intSubset->entities) {
        cairn_in_err(&c, 0, 0, "entity declarations are not allowed");
    } else {
        xml_state st;
        memset(&st, 0, sizeof st);
        st.c = &c;
        st.doc = doc;
        st.x = &x;
        xmlNodePtr root = xmlDocGetRootElement(doc);
        size_t k = 0;
        if (locate(&st, root)) {
            cairn_in_err(&c, 0, 0, "out of memory");
        } else {
            attach(&st, root, &k);
            root_elem(&st, root);
        }
        free(st.pos);
    }
    xmlFreeDoc(doc);
    xmlFreeParserCtxt(p);
    cairn_xpos_free(&x);
    return err->nerrors > before ? -1 : 0;
}

int cairn_parse_project_xml(cairn_net *net, const char *name, const char *text, size_t len,
                            cairn_error *err)
{
    return cairn_in_xml_parse(net, name, text, len, NULL, err);
}
