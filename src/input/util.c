/* Input stage helpers: located messages, safe echoing of user text, UTF-8
 * checking, whole-file reading and include path joining. */
#include <errno.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "input_int.h"

int cairn_in_err(in_ctx *c, int line, int col, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    int rc = cairn_error_vadd(c->err, CAIRN_SEV_ERROR, c->file, line, col, fmt, ap);
    va_end(ap);
    return rc;
}

int cairn_in_warn(in_ctx *c, int line, int col, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    int rc = cairn_error_vadd(c->err, CAIRN_SEV_WARNING, c->file, line, col, fmt, ap);
    va_end(ap);
    return rc;
}

/* Messages end up on a terminal: never echo control bytes or broken
 * UTF-8 from a damaged file. */
const char *cairn_in_show(const char *s, char *buf, size_t n)
{
    size_t i = 0, k = 0;
    if (!n)
        return buf;
    for (; s[i] && k + 1 < n && i < 40; i++) {
        unsigned char ch = (unsigned char)s[i];
        buf[k++] = (ch >= 0x20 && ch < 0x7f) ? (char)ch : '?';
    }
    if (s[i] && k + 4 < n) {
        memcpy(buf + k, "...", 3);
        k += 3;
    }
    buf[k] = '\0';
    return buf;
}

int cairn_in_utf8_valid(const char *str, size_t n)
{
    const unsigned char *s = (const unsigned char *)str;
    size_t i = 0;
    while (i < n) {
        unsigned c = s[i];
        size_t len;
        unsigned min, cp;
        if (c < 0x80) { i++; continue; }
        else if ((c & 0xe0) == 0xc0) { len = 2; min = 0x80; cp = c & 0x1f; }
        else if ((c & 0xf0) == 0xe0) { len = 3; min = 0x800; cp = c & 0x0f; }
        else if ((c & 0xf8) == 0xf0) { len = 4; min = 0x10000; cp = c & 0x07; }
        else return 0;
        if (i + len > n)
            return 0;
        for (size_t k = 1; k < len; k++) {
            if ((s[i + k] & 0xc0) != 0x80)
                return 0;
            cp = (cp << 6) | (s[i + k] & 0x3f);
        }
        if (cp < min || cp > 0x10ffff || (cp >= 0xd800 && cp <= 0xdfff))
            return 0;
        i += len;
    }
    return 1;
}

int cairn_in_read_file(const char *path, char **ptext, size_t *plen)
{
    FILE *fp = fopen(path, "rb");
    if (!fp)
        return -1;
    char *buf = NULL;
    size_t len = 0;
    /* One fread of the whole file when its size is known; a pipe or other
     * unseekable input falls back to growing reads. */
    if (fseek(fp, 0, SEEK_END) == 0) {
        long sz = ftell(fp);
        if (sz >= 0 && fseek(fp, 0, SEEK_SET) == 0) {
            buf = malloc((size_t)sz + 1);
            if (!buf) {
                fclose(fp);
                errno = ENOMEM;
                return -1;
            }
            len = fread(buf, 1, (size_t)sz, fp);
            if (len != (size_t)sz && ferror(fp)) {
                int e = errno;
                free(buf);
                fclose(fp);
                errno = e ? e : EIO;
                return -1;
            }
        }
    }
    if (!buf) {
        size_t cap = 0;
        clearerr(fp);
        for (;;) {
            if (cairn_grow((void **)&buf, &cap, len + 65537, 1)) {
                free(buf);
                fclose(fp);
                errno = ENOMEM;
                return -1;
            }
            size_t got = fread(buf + len, 1, 65536, fp);
            len += got;
            if (got < 65536)
                break;
        }
        if (ferror(fp)) {
            free(buf);
            fclose(fp);
            errno = EIO;
            return -1;
        }
    }
    fclose(fp);
    buf[len] = '\0';
    *ptext = buf;
    *plen = len;
    return 0;
}

int cairn_in_join_path(const char *base, const char *rel, char *buf, size_t n)
{
    const char *slash = strrchr(base, '/');
    int w;
    if (rel[0] == '/' || !slash)
        w = snprintf(buf, n, "%s", rel);
    else
        w = snprintf(buf, n, "%.*s/%s", (int)(slash - base), base, rel);
    return (w < 0 || (size_t)w >= n) ? -1 : 0;
}
