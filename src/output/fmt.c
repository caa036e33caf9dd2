/* Fast "%.*f" and "%.*g" for the result writers, byte for byte what
 * snprintf writes (the golden report and result files depend on every
 * digit).
 *
 * Why: a national network writes tens of millions of numbers, and glibc's
 * printf spends most of the writing time in its general positional and
 * multi-precision machinery (printf_positional, __printf_fp), even for
 * "%.7f" of a coordinate.
 *
 * How it stays exact. A finite double is x = m·2^e with an integer
 * m < 2^53 (frexp). For 0 <= k <= 27, x·10^k = (m·5^k)·2^(e+k), where
 * m·5^k < 2^53·5^27 < 2^116 is an exact 128-bit integer product; shifting
 * it right by −(e+k) bits and rounding the bits shifted out to nearest,
 * ties to even, gives round(x·10^k) exactly as glibc rounds the exact
 * binary value in the default rounding mode (C11 7.21.6.1p13: "correctly
 * rounded"; glibc honours the current mode, and nothing in cairn changes
 * it from round-to-nearest). The digits are then those of a 64-bit
 * integer. Anything outside that range (a huge value, more than 17
 * decimals, a result of 2^64 or more, NaN, infinity) goes to snprintf.
 * tests/unit/test_fmt.c compares both over millions of values, ties and
 * edge cases included. */
#include "fmt.h"

#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>

#define MAX_K 27     /* 5^27 < 2^63 */
#define MAX_DEC 17   /* 10^17 < 2^64, the divisor of the fixed format */

static const uint64_t pow5[MAX_K + 1] = {
    1ULL, 5ULL, 25ULL, 125ULL, 625ULL, 3125ULL, 15625ULL, 78125ULL, 390625ULL,
    1953125ULL, 9765625ULL, 48828125ULL, 244140625ULL, 1220703125ULL,
    6103515625ULL, 30517578125ULL, 152587890625ULL, 762939453125ULL,
    3814697265625ULL, 19073486328125ULL, 95367431640625ULL, 476837158203125ULL,
    2384185791015625ULL, 11920928955078125ULL, 59604644775390625ULL,
    298023223876953125ULL, 1490116119384765625ULL, 7450580596923828125ULL};

static const uint64_t pow10u[20] = {
    1ULL, 10ULL, 100ULL, 1000ULL, 10000ULL, 100000ULL, 1000000ULL, 10000000ULL,
    100000000ULL, 1000000000ULL, 10000000000ULL, 100000000000ULL,
    1000000000000ULL, 10000000000000ULL, 100000000000000ULL,
    1000000000000000ULL, 10000000000000000ULL, 100000000000000000ULL,
    1000000000000000000ULL, 10000000000000000000ULL};

/* (hi, lo) = a·b, exact. */
static void mul64(uint64_t a, uint64_t b, uint64_t *hi, uint64_t *lo)
{
    uint64_t a0 = a & 0xffffffffu, a1 = a >> 32, b0 = b & 0xffffffffu, b1 = b >> 32;
    uint64_t p00 = a0 * b0, p01 = a0 * b1, p10 = a1 * b0, p11 = a1 * b1;
    uint64_t mid = (p00 >> 32) + (p01 & 0xffffffffu) + (p10 & 0xffffffffu);
    *lo = (p00 & 0xffffffffu) | (mid << 32);
    *hi = p11 + (p01 >> 32) + (p10 >> 32) + (mid >> 32);
}

/* *pN = round(ax·10^k), ties to even, for finite ax >= 0 and 0 <= k <=
 * MAX_K; -1 when the result does not fit in 64 bits. */
static int scaled(double ax, int k, uint64_t *pN)
{
    if (ax == 0) {
        *pN = 0;
        return 0;
    }
    int e;
    double f = frexp(ax, &e);                 /* ax = f·2^e, 0.5 <= f < 1 */
    uint64_t m = (uint64_t)ldexp(f, 53);      /* exact: 53 significant bits */
    e -= 53;
    uint64_t hi, lo;
    mul64(m, pow5[k], &hi, &lo);
    int s = e + k;                            /* value = (hi, lo)·2^s */
    if (s >= 0) {
        if (hi != 0 || s >= 64 || (s > 0 && (lo >> (64 - s)) != 0))
            return -1;
        *pN = lo << s;
        return 0;
    }
    int sh = -s;
    if (sh >= 128) {                          /* (hi, lo) < 2^116 < half */
        *pN = 0;
        return 0;
    }
    uint64_t q, qhi, rhi, rlo, hhi, hlo;
    if (sh < 64) {
        q = (hi << (64 - sh)) | (lo >> sh);
        qhi = hi >> sh;
        rhi = 0;
        rlo = lo & ((1ULL << sh) - 1);
        hhi = 0;
        hlo = 1ULL << (sh - 1);
    } else if (sh == 64) {
        q = hi;
        qhi = 0;
        rhi = 0;
        rlo = lo;
        hhi = 0;
        hlo = 1ULL << 63;
    } else {
        q = hi >> (sh - 64);
        qhi = 0;
        rhi = hi & ((1ULL << (sh - 64)) - 1);
        rlo = lo;
        hhi = 1ULL << (sh - 65);
        hlo = 0;
    }
    if (qhi != 0)
        return -1;
    int up = rhi > hhi || (rhi == hhi && (rlo > hlo || (rlo == hlo && (q & 1))));
    if (up) {
        if (q == UINT64_MAX)
            return -1;
        q++;
    }
    *pN = q;
    return 0;
}

/* Decimal digits of v, at least `width` of them (leading zeros). */
static size_t digits(char *out, uint64_t v, int width)
{
    char t[24];
    size_t k = 0;
    do {
        t[k++] = (char)('0' + (int)(v % 10));
        v /= 10;
    } while (v);
    while ((int)k < width)
        t[k++] = '0';
    for (size_t i = 0; i < k; i++)
        out[i] = t[k - 1 - i];
    return k;
}

static int finish(char *buf, size_t n, const char *t, size_t len)
{
    if (n) {
        size_t c = len < n - 1 ? len : n - 1;
        memcpy(buf, t, c);
        buf[c] = 0;
    }
    return (int)len;
}

int cairn_fmt_fixed(char *buf, size_t n, double x, int dec)
{
    uint64_t N;
    if (!isfinite(x) || dec < 0 || dec > MAX_DEC || scaled(fabs(x), dec, &N))
        return snprintf(buf, n, "%.*f", dec, x);
    char t[48];
    size_t k = 0;
    if (signbit(x))
        t[k++] = '-';
    k += digits(t + k, N / pow10u[dec], 1);
    if (dec > 0) {
        t[k++] = '.';
        k += digits(t + k, N % pow10u[dec], dec);
    }
    return finish(buf, n, t, k);
}

int cairn_fmt_general(char *buf, size_t n, double x, int prec)
{
    if (!isfinite(x) || prec < 1 || prec > MAX_DEC)
        return snprintf(buf, n, "%.*g", prec, x);
    char t[48];
    size_t k = 0;
    if (signbit(x))
        t[k++] = '-';
    double ax = fabs(x);
    if (ax == 0) {
        t[k++] = '0';
        return finish(buf, n, t, k);
    }
    /* D = x rounded to prec significant digits, times 10^(prec−1−X), where
     * X is the exponent of the E style after that rounding (C11
     * 7.21.6.1p8, "g"); the first estimate of X may be one off either way */
    int X = (int)floor(log10(ax)), tries = 0;
    uint64_t D = 0;
    for (;;) {
        int kk = prec - 1 - X;
        if (kk < 0 || kk > MAX_K || scaled(ax, kk, &D) || ++tries > 3)
            return snprintf(buf, n, "%.*g", prec, x);
        if (D >= pow10u[prec]) {
            X++;
        } else if (D < pow10u[prec - 1]) {
            X--;
        } else {
            /* D = 10^(prec−1) may be a value just below 10^X rounded up
             * at too few digits: at X − 1 it has prec digits of its own
             * unless rounding carries there too */
            uint64_t D1;
            if (D == pow10u[prec - 1]) {
                if (kk + 1 > MAX_K || scaled(ax, kk + 1, &D1))
                    return snprintf(buf, n, "%.*g", prec, x);
                if (D1 < pow10u[prec]) {
                    X--;
                    D = D1;
                }
            }
            break;
        }
    }
    char d[24];
    size_t nd = digits(d, D, prec);            /* exactly prec digits */
    size_t last = nd;                           /* strip trailing zeros */
    if (X < -4 || X >= prec) {
        while (last > 1 && d[last - 1] == '0')
            last--;
        t[k++] = d[0];
        if (last > 1) {
            t[k++] = '.';
            memcpy(t + k, d + 1, last - 1);
            k += last - 1;
        }
        t[k++] = 'e';
        t[k++] = X < 0 ? '-' : '+';
        k += digits(t + k, (uint64_t)(X < 0 ? -X : X), 2);
        return finish(buf, n, t, k);
    }
    if (X >= 0) {
        size_t ip = (size_t)X + 1;              /* integer digits */
        memcpy(t + k, d, ip);
        k += ip;
        while (last > ip && d[last - 1] == '0')
            last--;
        if (last > ip) {
            t[k++] = '.';
            memcpy(t + k, d + ip, last - ip);
            k += last - ip;
        }
    } else {
        while (last > 0 && d[last - 1] == '0')
            last--;                             /* d[0] != 0: last >= 1 */
        t[k++] = '0';
        t[k++] = '.';
        for (int z = 0; z < -X - 1; z++)
            t[k++] = '0';
        memcpy(t + k, d, last);
        k += last;
    }
    return finish(buf, n, t, k);
}

int cairn_fmt_file_line(char *buf, size_t n, const char *file, int line)
{
    size_t lf = strlen(file);
    char d[24];
    int nd = cairn_fmt_fixed(d, sizeof d, (double)line, 0);   /* = "%d" */
    if (lf + 1 + (size_t)nd >= n)
        return snprintf(buf, n, "%s:%d", file, line);
    memcpy(buf, file, lf);
    buf[lf] = ':';
    memcpy(buf + lf + 1, d, (size_t)nd + 1);
    return (int)(lf + 1 + (size_t)nd);
}

const char *cairn_fmt_csv_num(char *buf, size_t n, double x, int dec)
{
    if (!isfinite(x)) {
        buf[0] = 0;
        return buf;
    }
    cairn_fmt_fixed(buf, n, x, dec);
    if (buf[0] == '-') {
        const char *p = buf + 1;
        while (*p == '0' || *p == '.')
            p++;
        if (!*p)
            memmove(buf, buf + 1, strlen(buf));
    }
    return buf;
}

int cairn_fmt_utf8_len(const unsigned char *p)
{
    unsigned c = p[0];
    if (c < 0x80)
        return 1;
    int len = c >= 0xC2 && c <= 0xDF ? 2 : c >= 0xE0 && c <= 0xEF ? 3
            : c >= 0xF0 && c <= 0xF4 ? 4 : 0;
    for (int i = 1; i < len; i++)
        if ((p[i] & 0xC0) != 0x80)
            return 0;   /* also stops at the terminating 0 */
    if (len == 3 && ((c == 0xE0 && p[1] < 0xA0) || (c == 0xED && p[1] >= 0xA0) ||
                     (c == 0xEF && p[1] == 0xBF && p[2] >= 0xBE)))
        return 0;
    if (len == 4 && ((c == 0xF0 && p[1] < 0x90) || (c == 0xF4 && p[1] >= 0x90)))
        return 0;
    return len;
}

void cairn_fmt_csv_field(FILE *f, const char *s)
{
    if (!strpbrk(s, ",\"\r\n")) {
        fputs(s, f);
        return;
    }
    fputc('"', f);
    for (; *s; s++) {
        if (*s == '"')
            fputc('"', f);
        fputc(*s, f);
    }
    fputc('"', f);
}
