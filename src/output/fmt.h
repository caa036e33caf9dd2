/* Fast number formatting for the result writers (src/output/fmt.c).
 * Private to src/output; not API. */
#ifndef CAIRN_OUTPUT_FMT_H
#define CAIRN_OUTPUT_FMT_H

#include <stddef.h>

/* The text snprintf(buf, n, "%.*f", dec, x) writes, byte for byte, for
 * finite x and 0 <= dec <= 17 (other cases go to snprintf itself).
 * Returns the length, as snprintf does. */
int cairn_fmt_fixed(char *buf, size_t n, double x, int dec);

/* The text snprintf(buf, n, "%.*g", prec, x) writes, byte for byte, for
 * 1 <= prec <= 17 (other cases go to snprintf itself). Returns the
 * length. */
int cairn_fmt_general(char *buf, size_t n, double x, int prec);

/* snprintf(buf, n, "%s:%d", file, line), byte for byte. */
int cairn_fmt_file_line(char *buf, size_t n, const char *file, int line);

/* A CSV number cell: "%.*f" of x, empty for NAN or infinity, and never a
 * negative zero ("-0.0000000" becomes "0.0000000"). Returns buf. */
const char *cairn_fmt_csv_num(char *buf, size_t n, double x, int dec);

/* Length of the well-formed UTF-8 sequence that starts at p (1-4) that is
 * also an XML 1.0 character (XML 1.0 §2.2: no surrogates, no U+FFFE or
 * U+FFFF; overlong forms are not UTF-8, RFC 3629 §3), or 0 when the bytes
 * there are not one. p[0] must not be 0; an ASCII byte gives 1, control
 * characters included (the escapers decide about those). */
int cairn_fmt_utf8_len(const unsigned char *p);

#include <stdio.h>
/* A CSV field (RFC 4180): quoted when it holds a comma, quote or newline
 * (mark ids cannot, file names can). */
void cairn_fmt_csv_field(FILE *f, const char *s);

#endif
