/* Run information for the report: SHA-256 of the input files (nettle's
 * implementation of FIPS 180-4, so we carry no hand-written hash), their
 * sizes, `..` components in their paths, and the UTC time of the run. */
#include <nettle/sha2.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>
#include <time.h>

#include "cairn/report.h"

static void to_hex(const uint8_t *d, char hex[65])
{
    static const char digits[] = "0123456789abcdef";
    for (int i = 0; i < SHA256_DIGEST_SIZE; i++) {
        hex[2 * i] = digits[d[i] >> 4];
        hex[2 * i + 1] = digits[d[i] & 15];
    }
    hex[64] = 0;
}

void cairn_sha256_hex(const void *data, size_t n, char hex[65])
{
    struct sha256_ctx ctx;
    uint8_t d[SHA256_DIGEST_SIZE];
    sha256_init(&ctx);
    sha256_update(&ctx, n, data);
    sha256_digest(&ctx, sizeof d, d);
    to_hex(d, hex);
}

/* Streams the file, so that a large field book costs 64 KiB of memory. */
static int hash_file(const char *path, char hex[65], long long *psize)
{
    hex[0] = 0;
    *psize = -1;
    FILE *f = fopen(path, "rb");
    if (!f)
        return -1;
    struct sha256_ctx ctx;
    uint8_t d[SHA256_DIGEST_SIZE];
    unsigned char buf[65536];
    long long total = 0;
    size_t got;
    sha256_init(&ctx);
    while ((got = fread(buf, 1, sizeof buf, f)) > 0) {
        sha256_update(&ctx, got, buf);
        total += (long long)got;
    }
    int bad = ferror(f);
    fclose(f);
    if (bad)
        return -1;
    sha256_digest(&ctx, sizeof d, d);
    to_hex(d, hex);
    *psize = total;
    return 0;
}

int cairn_sha256_file(const char *path, char hex[65])
{
    long long size;
    return hash_file(path, hex, &size);
}

int cairn_path_has_dotdot(const char *path)
{
    if (!path)
        return 0;
    for (const char *p = path; *p;) {
        const char *end = strchr(p, '/');
        size_t len = end ? (size_t)(end - p) : strlen(p);
        if (len == 2 && p[0] == '.' && p[1] == '.')
            return 1;
        if (!end)
            break;
        p = end + 1;
    }
    return 0;
}

int cairn_report_file_fill(cairn_report_file *f, const char *path)
{
    memset(f, 0, sizeof *f);
    f->path = path;
    f->dotdot = cairn_path_has_dotdot(path);
    return hash_file(path, f->sha256, &f->size);
}

char *cairn_report_utc_now(char *buf, size_t n)
{
    time_t t = time(NULL);
    struct tm tm;
    if (n == 0)
        return buf;
    if (t == (time_t)-1 || !gmtime_r(&t, &tm) ||
        strftime(buf, n, "%Y-%m-%d %H:%M:%S UTC", &tm) == 0)
        snprintf(buf, n, "unknown");
    return buf;
}
