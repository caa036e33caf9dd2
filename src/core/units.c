/* Units, numbers, angles and standard deviations with mandatory units.
 *
 * Length units are the exact legal definitions: the international foot is
 * 0.3048 m (1959 agreement; NIST/NOAA, 85 FR 62698, 2020) and the US survey
 * foot 1200/3937 m (Mendenhall Order, 1893). Angles are reduced exactly in
 * their input unit (digit strings for DMS) before converting to radians, so
 * that 59.99995" never becomes 60". */
#include <ctype.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cairn/core.h"

double cairn_length_factor(cairn_length_unit u)
{
    switch (u) {
    case CAIRN_LENGTH_FT: return 0.3048;
    case CAIRN_LENGTH_USFT: return 1200.0 / 3937.0;
    case CAIRN_LENGTH_M: default: return 1.0;
    }
}

int cairn_length_unit_parse(const char *s, cairn_length_unit *pu)
{
    if (!strcmp(s, "m")) *pu = CAIRN_LENGTH_M;
    else if (!strcmp(s, "ft")) *pu = CAIRN_LENGTH_FT;
    else if (!strcmp(s, "usft")) *pu = CAIRN_LENGTH_USFT;
    else return -1;
    return 0;
}

int cairn_angle_unit_parse(const char *s, cairn_angle_unit *pu)
{
    if (!strcmp(s, "dms")) *pu = CAIRN_ANGLE_DMS;
    else if (!strcmp(s, "deg")) *pu = CAIRN_ANGLE_DEG;
    else if (!strcmp(s, "gon")) *pu = CAIRN_ANGLE_GON;
    else return -1;
    return 0;
}

const char *cairn_length_unit_name(cairn_length_unit u)
{
    static const char *const names[] = {"m", "ft", "usft"};
    return (unsigned)u < 3 ? names[u] : "?";
}

const char *cairn_angle_unit_name(cairn_angle_unit u)
{
    static const char *const names[] = {"dms", "deg", "gon"};
    return (unsigned)u < 3 ? names[u] : "?";
}

/* Length of the longest prefix of s that is a decimal number:
 * [+-]? digits [. digits] [eE [+-] digits], at least one mantissa digit. */
static size_t number_prefix(const char *s)
{
    size_t i = 0, digits = 0;
    if (s[i] == '+' || s[i] == '-')
        i++;
    while (isdigit((unsigned char)s[i])) { i++; digits++; }
    if (s[i] == '.') {
        i++;
        while (isdigit((unsigned char)s[i])) { i++; digits++; }
    }
    if (!digits)
        return 0;
    if (s[i] == 'e' || s[i] == 'E') {
        size_t j = i + 1;
        if (s[j] == '+' || s[j] == '-')
            j++;
        if (isdigit((unsigned char)s[j])) {
            while (isdigit((unsigned char)s[j]))
                j++;
            i = j;
        }
    }
    return i;
}

int cairn_parse_number(const char *s, double *px)
{
    size_t n = number_prefix(s);
    if (!n || s[n] != '\0')
        return -1;
    char *end;
    double x = strtod(s, &end);
    if (end != s + n || !isfinite(x))
        return -1;
    *px = x;
    return 0;
}

/* Packed DMS "DDD.MMSSsss": minutes are the first two decimals, seconds the
 * next two, further digits are decimals of seconds. Short fractions are
 * padded with zeros on the right (123.4 is 123°40'). */
static int parse_packed_dms(const char *s, double *pdeg)
{
    size_t i = 0;
    double deg = 0;
    if (!isdigit((unsigned char)s[0]) && s[0] != '.')
        return -1;
    while (isdigit((unsigned char)s[i]))
        deg = deg * 10 + (s[i++] - '0');
    char frac[64] = "0000";
    size_t nf = 0;
    if (s[i] == '.') {
        i++;
        while (isdigit((unsigned char)s[i])) {
            if (nf + 1 >= sizeof frac)
                return -1;
            frac[nf++] = s[i++];
        }
        if (nf < 4)
            nf = 4;
        frac[nf] = '\0';
    }
    if (s[i] != '\0' || (i == 1 && s[0] == '.'))
        return -1;
    int mm = (frac[0] - '0') * 10 + (frac[1] - '0');
    double ss = (frac[2] - '0') * 10 + (frac[3] - '0');
    double scale = 0.1;
    for (size_t k = 4; k < nf; k++, scale /= 10)
        ss += (frac[k] - '0') * scale;
    if (mm >= 60 || ss >= 60)
        return -2;
    *pdeg = deg + mm / 60.0 + ss / 3600.0;
    return 0;
}

/* "D-M-S.s": integer degrees and minutes, decimal seconds. */
static int parse_hyphen_dms(const char *s, double *pdeg)
{
    char buf[128];
    if (strlen(s) >= sizeof buf)
        return -1;
    strcpy(buf, s);
    char *p1 = strchr(buf, '-');
    if (!p1)
        return -1;
    char *p2 = strchr(p1 + 1, '-');
    if (!p2 || strchr(p2 + 1, '-'))
        return -1;
    *p1 = *p2 = '\0';
    const char *d = buf, *m = p1 + 1, *sec = p2 + 1;
    for (const char *q = d; *q; q++)
        if (!isdigit((unsigned char)*q)) return -1;
    for (const char *q = m; *q; q++)
        if (!isdigit((unsigned char)*q)) return -1;
    if (!*d || !*m || !*sec || !isdigit((unsigned char)sec[0]))
        return -1;
    double dv, mv, sv;
    if (cairn_parse_number(d, &dv) || cairn_parse_number(m, &mv) ||
        cairn_parse_number(sec, &sv))
        return -1;
    if (mv >= 60 || sv >= 60)
        return -2;
    *pdeg = dv + mv / 60.0 + sv / 3600.0;
    return 0;
}

int cairn_parse_angle(const char *s, cairn_angle_unit u, double *prad)
{
    int neg = 0;
    double v;
    if (u != CAIRN_ANGLE_DMS) {
        if (cairn_parse_number(s, &v))
            return -1;
        *prad = u == CAIRN_ANGLE_GON ? v * (CAIRN_PI / 200.0) : v * (CAIRN_PI / 180.0);
        return 0;
    }
    if (*s == '-' || *s == '+') {
        neg = *s == '-';
        s++;
    }
    int rc = strchr(s, '-') ? parse_hyphen_dms(s, &v) : parse_packed_dms(s, &v);
    if (rc)
        return rc;
    *prad = (neg ? -v : v) * (CAIRN_PI / 180.0);
    return 0;
}

size_t cairn_format_angle(double rad, cairn_angle_unit u, int decimals,
                          char *buf, size_t n)
{
    int len;
    if (decimals < 0) decimals = 0;
    if (decimals > 9) decimals = 9;
    if (!isfinite(rad)) {
        len = snprintf(buf, n, "nan");
    } else if (u == CAIRN_ANGLE_DEG) {
        len = snprintf(buf, n, "%.*f", decimals, rad * (180.0 / CAIRN_PI));
    } else if (u == CAIRN_ANGLE_GON) {
        len = snprintf(buf, n, "%.*f", decimals, rad * (200.0 / CAIRN_PI));
    } else {
        /* Round once, in units of the last printed digit of the seconds,
         * then split: carries happen in integers, so 60" or 60' cannot
         * appear. */
        double deg = rad * (180.0 / CAIRN_PI);
        int neg = deg < 0;
        double p10 = pow(10.0, decimals);
        double ticks = llround(fabs(deg) * 3600.0 * p10) * 1.0;
        long long t = (long long)ticks;
        long long per_sec = (long long)p10;
        long long sec_ticks = t % (60 * per_sec);
        long long min_total = t / (60 * per_sec);
        long long mm = min_total % 60, dd = min_total / 60;
        long long ss = sec_ticks / per_sec, sf = sec_ticks % per_sec;
        if (t == 0)
            neg = 0;
        if (decimals > 0)
            len = snprintf(buf, n, "%s%lld-%02lld-%02lld.%0*lld", neg ? "-" : "", dd, mm,
                           ss, decimals, sf);
        else
            len = snprintf(buf, n, "%s%lld-%02lld-%02lld", neg ? "-" : "", dd, mm, ss);
    }
    if (len < 0)
        return 0;
    return (size_t)len < n ? (size_t)len : (n ? n - 1 : 0);
}

double cairn_wrap_2pi(double a)
{
    double t = fmod(a, 2 * CAIRN_PI);
    if (t < 0)
        t += 2 * CAIRN_PI;
    if (t >= 2 * CAIRN_PI)
        t = 0;
    return t;
}

double cairn_wrap_pi(double a)
{
    double t = cairn_wrap_2pi(a);
    if (t > CAIRN_PI)
        t -= 2 * CAIRN_PI;
    return t;
}

struct sd_unit {
    const char *name;
    unsigned kind;
    double factor; /* to metres, radians or ppm */
};

/* 1 mgon = 1e-3 gon; 1 cc = 1e-4 gon (centesimal seconds). */
static const struct sd_unit sd_units[] = {
    {"mm", CAIRN_SD_LENGTH, 0.001},
    {"cm", CAIRN_SD_LENGTH, 0.01},
    {"m", CAIRN_SD_LENGTH, 1.0},
    {"ft", CAIRN_SD_LENGTH, 0.3048},
    {"usft", CAIRN_SD_LENGTH, 1200.0 / 3937.0},
    {"sec", CAIRN_SD_ANGLE, CAIRN_PI / (180.0 * 3600.0)},
    {"\"", CAIRN_SD_ANGLE, CAIRN_PI / (180.0 * 3600.0)},
    {"mgon", CAIRN_SD_ANGLE, CAIRN_PI / 200.0 * 1e-3},
    {"cc", CAIRN_SD_ANGLE, CAIRN_PI / 200.0 * 1e-4},
    {"ppm", CAIRN_SD_PPM, 1.0},
};

static void allowed_units(unsigned allowed, char *buf, size_t n)
{
    buf[0] = '\0';
    size_t len = 0;
    for (size_t i = 0; i < sizeof sd_units / sizeof sd_units[0]; i++) {
        if (!(sd_units[i].kind & allowed))
            continue;
        int w = snprintf(buf + len, n - len, "%s%s", len ? ", " : "", sd_units[i].name);
        if (w < 0 || (size_t)w >= n - len)
            break;
        len += (size_t)w;
    }
}

/* The input as messages echo it: at most 40 bytes, anything outside
 * printable ASCII as '?' (a message must not carry control bytes or cut
 * UTF-8 onto a terminal, nor be swamped by a 64 KB value). */
static void show_input(const char *s, char *buf, size_t n)
{
    size_t i = 0, k = 0;
    for (; s[i] && k + 1 < n && i < 40; i++) {
        unsigned char ch = (unsigned char)s[i];
        buf[k++] = (ch >= 0x20 && ch < 0x7f) ? (char)ch : '?';
    }
    if (s[i] && k + 4 < n) {
        memcpy(buf + k, "...", 3);
        k += 3;
    }
    buf[k] = '\0';
}

int cairn_parse_sd(const char *str, unsigned allowed, cairn_sd *psd, char *msg,
                   size_t msglen)
{
    cairn_sd sd = {0, 0, 0, 0};
    char units[128], s[64];
    const char *p = str;
    show_input(str, s, sizeof s);
    allowed_units(allowed, units, sizeof units);
    while (isspace((unsigned char)*p))
        p++;
    if (!*p) {
        snprintf(msg, msglen, "empty standard deviation (give a value with a unit: %s)",
                 units);
        return -1;
    }
    for (;;) {
        while (isspace((unsigned char)*p))
            p++;
        size_t nl = number_prefix(p);
        if (!nl) {
            snprintf(msg, msglen, "'%s' is not a value with a unit (expected e.g. 1 mm + 1.5 ppm)", s);
            return -1;
        }
        char num[64];
        if (nl >= sizeof num) {
            snprintf(msg, msglen, "number too long in '%s'", s);
            return -1;
        }
        memcpy(num, p, nl);
        num[nl] = '\0';
        double v;
        if (cairn_parse_number(num, &v)) {
            snprintf(msg, msglen, "'%s' is not a finite number", num);
            return -1;
        }
        p += nl;
        while (isspace((unsigned char)*p))
            p++;
        const char *u0 = p;
        if (*p == '"')
            p++;
        else
            while (isalpha((unsigned char)*p))
                p++;
        size_t ul = (size_t)(p - u0);
        if (!ul) {
            snprintf(msg, msglen, "'%s' has no unit (use %s)", num, units);
            return -1;
        }
        const struct sd_unit *unit = NULL;
        for (size_t i = 0; i < sizeof sd_units / sizeof sd_units[0]; i++)
            if (strlen(sd_units[i].name) == ul && !strncmp(sd_units[i].name, u0, ul))
                unit = &sd_units[i];
        if (!unit) {
            char u[64];
            show_input(u0, u, ul < 40 ? ul + 1 : sizeof u);
            snprintf(msg, msglen, "unknown unit '%s' in '%s' (use %s)", u, s, units);
            return -1;
        }
        if (!(unit->kind & allowed)) {
            snprintf(msg, msglen, "unit '%s' is the wrong kind here (use %s)", unit->name,
                     units);
            return -1;
        }
        if (v < 0) {
            snprintf(msg, msglen, "standard deviation '%s' is negative", s);
            return -1;
        }
        if (sd.has & unit->kind) {
            snprintf(msg, msglen, "'%s' gives the same kind of term twice", s);
            return -1;
        }
        sd.has |= unit->kind;
        if (unit->kind == CAIRN_SD_LENGTH) sd.length = v * unit->factor;
        else if (unit->kind == CAIRN_SD_ANGLE) sd.angle = v * unit->factor;
        else sd.ppm = v * unit->factor;
        while (isspace((unsigned char)*p))
            p++;
        if (*p == '\0')
            break;
        if (*p != '+') {
            snprintf(msg, msglen, "unexpected '%c' in '%s' (terms are joined with +)",
                     (*p >= 0x20 && *p < 0x7f) ? *p : '?', s);
            return -1;
        }
        p++;
    }
    *psd = sd;
    return 0;
}
