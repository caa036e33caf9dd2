/* cairn — input: source positions in the raw text of an XML project.
 *
 * libxml2 gives an element only the line where its start tag ended, and
 * no position at all for an attribute. Diagnostics need line and column
 * of the '<' of an element and of an attribute's name, so this scanner
 * walks the raw text once, start tag by start tag, in document order. */
#ifndef CAIRN_XML_POS_H
#define CAIRN_XML_POS_H

#include <stddef.h>

typedef struct {
    const char *text;   /* after any byte order mark */
    size_t len;
    size_t *lines;      /* offset of the start of each line */
    size_t nlines;
    size_t cur;         /* scanning cursor */
} xpos;

/* Build the line table. Returns 0, or -1 when out of memory. */
int cairn_xpos_init(xpos *x, const char *text, size_t len);
void cairn_xpos_free(xpos *x);
/* 1-based line and byte column of offset off. */
void cairn_xpos_linecol(const xpos *x, size_t off, int *pline, int *pcol);
/* Take the next start tag after the cursor, which must be `name`;
 * [*pstart, *pend) is the tag from '<' to just past '>'. Returns 0, or -1
 * when there is none or it has another name (the cursor still moves past
 * it). */
int cairn_xpos_next_tag(xpos *x, const char *name, size_t *pstart, size_t *pend);
/* Offset of attribute `attr`'s name inside the tag [start, end), or
 * (size_t)-1. */
size_t cairn_xpos_attr(const xpos *x, size_t start, size_t end, const char *attr);
/* Look for what the loader refuses before libxml2 sees it: an entity
 * declaration (external entities, "billion laughs") or a DOCTYPE naming
 * an external DTD. Returns NULL, or the message with *poff set. */
const char *cairn_xpos_forbidden(const xpos *x, size_t *poff);

#endif
