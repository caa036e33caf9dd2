/*
 * gen — synthetic control networks for cairn's benchmarks and tests.
 *
 * Writes one field book (FORMAT.md "The field book") describing an invented
 * network: marks on a jittered square grid, a few held marks, one setup per
 * mark sighting its nearest neighbours (or, for --kind level, levelled rises
 * between neighbours), with noise drawn from the same a priori model that
 * cairn uses (FORMAT.md "Models"). The numbers are fictional throughout.
 *
 * This is a standalone tool: it depends only on libc and libm and shares no
 * code with the library, so that a bug in cairn's models cannot cancel out
 * against the same bug here.
 *
 *   gen [--kind plane|3d|level] [--marks N] [--seed S] [--blunders K]
 *       [--start-offset METRES] [--no-starts] [--spacing METRES]
 *       [--truth FILE.csv] -o FILE.cfb
 *
 * Build: gcc -std=c11 -O2 -o gen gen.c -lm
 */

#include <errno.h>
#include <inttypes.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define PI 3.14159265358979323846
#define EARTH_R 6371000.0 /* FORMAT.md "Models": mean Earth radius, m */
#define REFRACTION_K 0.13 /* FORMAT.md default refraction coefficient */
#define ARCSEC (PI / (180.0 * 3600.0))

/* The instrument written into every field book; the noise below is drawn
 * from exactly these numbers so that an adjustment should find a variance
 * factor near 1. */
#define SD_DIR (1.0 * ARCSEC)  /* direction 1sec */
#define SD_ZEN (1.5 * ARCSEC)  /* zenith 1.5sec */
#define SD_DIST_A 0.001        /* distance 1mm + ... */
#define SD_DIST_PPM 1.5        /* ... + 1.5ppm */
#define SD_CENTRING 0.0006     /* centring 0.6mm */
#define SD_HEIGHT 0.001        /* height 1mm */
#define SD_LEVEL_KM 0.0007     /* level per-km 0.7mm */

/* Gross errors given to --blunders observations: far above the noise
 * (10-40 sigma) so a working snooper must find every one. */
#define BLUNDER_DIST 0.05            /* m, on a horiz or slope distance */
#define BLUNDER_DIR (20.0 * ARCSEC)  /* on a direction */
/* a zenith angle's sigma grows with 2 height errors over a short leg (about
 * 2.7" at 130 m), so its blunder is larger to stay near 10 sigma */
#define BLUNDER_ZEN (30.0 * ARCSEC)
#define BLUNDER_RISE 0.010           /* m, on a rise */

#define MAX_NB 8 /* most neighbours a setup sights */
#define GRID_E0 300000.0
#define GRID_N0 4100000.0
#define HELD_EVERY 50 /* one held mark per 50 x 50 = 2500 grid cells */

enum kind { KIND_PLANE, KIND_3D, KIND_LEVEL };

/* ---- PRNG: splitmix64 seeds xoshiro256**; all state is in a struct ---- */

typedef struct {
    uint64_t s[4];
    int have_spare; /* Box-Muller yields deviates in pairs */
    double spare;
} rng_t;

static uint64_t splitmix64(uint64_t *x)
{
    uint64_t z = (*x += 0x9e3779b97f4a7c15ULL);
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
    return z ^ (z >> 31);
}

/* Each purpose (geometry, noise, starts, blunders) gets its own stream, so
 * that e.g. --blunders or --no-starts leaves every other number unchanged. */
static void rng_init(rng_t *r, uint64_t seed, uint64_t stream)
{
    uint64_t x = seed ^ (stream * 0xd1b54a32d192ed03ULL);
    for (int i = 0; i < 4; i++)
        r->s[i] = splitmix64(&x);
    r->have_spare = 0;
    r->spare = 0.0;
}

static uint64_t rotl(uint64_t x, int k)
{
    return (x << k) | (x >> (64 - k));
}

static uint64_t rng_next(rng_t *r)
{
    uint64_t *s = r->s;
    uint64_t result = rotl(s[1] * 5, 7) * 9;
    uint64_t t = s[1] << 17;
    s[2] ^= s[0];
    s[3] ^= s[1];
    s[1] ^= s[2];
    s[0] ^= s[3];
    s[2] ^= t;
    s[3] = rotl(s[3], 45);
    return result;
}

/* Uniform in [0, 1) with 53 random bits. */
static double rng_uniform(rng_t *r)
{
    return (double)(rng_next(r) >> 11) * 0x1.0p-53;
}

static double rng_range(rng_t *r, double lo, double hi)
{
    return lo + (hi - lo) * rng_uniform(r);
}

/* Standard normal deviate by the Box-Muller transform; 1 - u keeps the
 * logarithm's argument in (0, 1]. */
static double rng_normal(rng_t *r)
{
    if (r->have_spare) {
        r->have_spare = 0;
        return r->spare;
    }
    double u1 = 1.0 - rng_uniform(r);
    double u2 = rng_uniform(r);
    double rad = sqrt(-2.0 * log(u1));
    r->spare = rad * sin(2.0 * PI * u2);
    r->have_spare = 1;
    return rad * cos(2.0 * PI * u2);
}

/* ---- buffered output with exact fixed-point formatting ---- */

/* printf("%.4f") for ten million numbers costs seconds; values here are
 * rounded to an integer count of the last digit anyway, so format that
 * integer directly. This also makes the rounding explicit (llround). */
typedef struct {
    FILE *f;
    char buf[1 << 16];
    size_t pos;
    int failed;
    uint64_t line; /* number of newlines written so far */
} out_t;

static void out_flush(out_t *o)
{
    if (o->pos > 0 && fwrite(o->buf, 1, o->pos, o->f) != o->pos)
        o->failed = 1;
    o->pos = 0;
}

static void out_mem(out_t *o, const char *s, size_t n)
{
    if (o->pos + n > sizeof o->buf)
        out_flush(o);
    if (n > sizeof o->buf) {
        if (fwrite(s, 1, n, o->f) != n)
            o->failed = 1;
        return;
    }
    memcpy(o->buf + o->pos, s, n);
    o->pos += n;
}

static void out_str(out_t *o, const char *s)
{
    out_mem(o, s, strlen(s));
}

static void out_nl(out_t *o)
{
    out_mem(o, "\n", 1);
    o->line++;
}

static void out_u64(out_t *o, uint64_t v, int width)
{
    char tmp[24];
    int n = 0;
    do {
        tmp[n++] = (char)('0' + v % 10);
        v /= 10;
    } while (v > 0);
    while (n < width)
        tmp[n++] = '0';
    char rev[24];
    for (int i = 0; i < n; i++)
        rev[i] = tmp[n - 1 - i];
    out_mem(o, rev, (size_t)n);
}

/* v rounded to `dec` decimals (dec <= 9); "-" only for a non-zero value. */
static void out_fixed(out_t *o, double v, int dec)
{
    static const int64_t pow10[] = {1, 10, 100, 1000, 10000, 100000,
                                    1000000, 10000000, 100000000,
                                    1000000000};
    int64_t scaled = llround(v * (double)pow10[dec]);
    if (scaled < 0) {
        out_mem(o, "-", 1);
        scaled = -scaled;
    }
    out_u64(o, (uint64_t)(scaled / pow10[dec]), 1);
    if (dec > 0) {
        out_mem(o, ".", 1);
        out_u64(o, (uint64_t)(scaled % pow10[dec]), dec);
    }
}

/* An angle (radians) in packed DDD.MMSSss to 0.01". Rounding is done once,
 * on the total count of hundredths of a second, and the fields are then
 * split off by integer division, so 59.999" can never print as 60 seconds
 * (it carries into the minutes, and 60 minutes into the degrees). When
 * `wrap` is set the result is reduced to [0, 360). */
static void out_dms(out_t *o, double rad, int wrap)
{
    const int64_t full = 360LL * 360000LL;
    double deg = rad * (180.0 / PI);
    if (wrap) {
        deg = fmod(deg, 360.0);
        if (deg < 0.0)
            deg += 360.0;
    }
    int64_t t = llround(deg * 360000.0);
    if (wrap && t >= full)
        t -= full;
    if (t < 0) {
        out_mem(o, "-", 1);
        t = -t;
    }
    out_u64(o, (uint64_t)(t / 360000), 1);
    out_mem(o, ".", 1);
    int64_t rem = t % 360000;
    out_u64(o, (uint64_t)(rem / 6000), 2);    /* minutes */
    out_u64(o, (uint64_t)(rem % 6000), 4);    /* seconds and hundredths */
}

/* ---- the network ---- */

typedef struct {
    enum kind kind;
    size_t n;          /* marks */
    uint64_t seed;
    size_t blunders;
    double start_offset;
    int no_starts;
    double spacing;
    const char *out_path;
    const char *truth_path;
} params_t;

typedef struct {
    size_t n, side;       /* marks; grid columns */
    int id_width;         /* digits in mark ids */
    double *e, *nn, *h;   /* true coordinates, rounded to 0.1 mm */
    unsigned char *held;
    uint32_t *nb;         /* MAX_NB neighbour slots per mark, nearest first */
    unsigned char *nnb;   /* neighbours actually sighted (or levelled) */
} net_t;

static void *xcalloc(size_t n, size_t size)
{
    void *p = calloc(n ? n : 1, size);
    if (!p) {
        fprintf(stderr, "gen: out of memory\n");
        exit(1);
    }
    return p;
}

static double round_to(double v, double unit)
{
    return (double)llround(v / unit) * unit;
}

/* Gentle terrain: a few long sine waves (wavelengths 3-12 km, amplitudes of
 * a few metres) about 100 m, so legs of 250 m rise by metres, not tens. */
typedef struct {
    double amp[4], kx[4], ky[4], ph[4];
} terrain_t;

static void terrain_init(terrain_t *t, rng_t *r)
{
    for (int i = 0; i < 4; i++) {
        double wl = rng_range(r, 3000.0, 12000.0);
        double dir = rng_range(r, 0.0, 2.0 * PI);
        t->amp[i] = rng_range(r, 2.0, 8.0);
        t->kx[i] = 2.0 * PI / wl * sin(dir);
        t->ky[i] = 2.0 * PI / wl * cos(dir);
        t->ph[i] = rng_range(r, 0.0, 2.0 * PI);
    }
}

static double terrain_h(const terrain_t *t, double de, double dn)
{
    double h = 100.0;
    for (int i = 0; i < 4; i++)
        h += t->amp[i] * sin(t->kx[i] * de + t->ky[i] * dn + t->ph[i]);
    return h;
}

/* Marks fill the grid row by row from the south-west; the last row may be
 * partial. The grid is centred on (GRID_E0, GRID_N0). */
static void make_marks(net_t *net, const params_t *p, rng_t *geo)
{
    size_t n = p->n < 3 ? 3 : p->n; /* parse_args enforces >= 3 */
    size_t side = (size_t)ceil(sqrt((double)n));
    while (side * side < n)
        side++;
    size_t rows = (n + side - 1) / side;
    net->n = n;
    net->side = side;
    net->id_width = 6;
    for (size_t m = n - 1, d = 1; m >= 10; m /= 10)
        if (++d > (size_t)net->id_width)
            net->id_width = (int)d;
    net->e = xcalloc(n, sizeof *net->e);
    net->nn = xcalloc(n, sizeof *net->nn);
    net->h = xcalloc(n, sizeof *net->h);
    net->held = xcalloc(n, 1);

    terrain_t terr;
    terrain_init(&terr, geo);
    double s = p->spacing, jit = 0.25 * s;
    double e0 = GRID_E0 - 0.5 * s * (double)(side - 1);
    double n0 = GRID_N0 - 0.5 * s * (double)(rows - 1);
    for (size_t i = 0; i < n; i++) {
        size_t row = i / side, col = i % side;
        double de = s * (double)col + rng_range(geo, -jit, jit);
        double dn = s * (double)row + rng_range(geo, -jit, jit);
        net->e[i] = round_to(e0 + de, 1e-4);
        net->nn[i] = round_to(n0 + dn, 1e-4);
        net->h[i] = round_to(terrain_h(&terr, de, dn) +
                                 rng_range(geo, -0.5, 0.5),
                             1e-4);
        /* one held mark in the middle of each 50 x 50 block */
        if (row % HELD_EVERY == HELD_EVERY / 2 &&
            col % HELD_EVERY == HELD_EVERY / 2)
            net->held[i] = 1;
    }
    /* the four corners (of a partial last row, its ends) */
    net->held[0] = 1;
    net->held[(side < n ? side : n) - 1] = 1;
    net->held[(rows - 1) * side] = 1;
    net->held[n - 1] = 1;
}

/* k nearest neighbours of every mark with a bucket grid of cell = spacing:
 * each query scans rings of cells outward and stops once the ring just
 * finished is farther than the k-th best, so the whole search is O(N). */
static void find_neighbours(net_t *net, double cell, int k)
{
    size_t n = net->n;
    double emin = net->e[0], emax = emin, nmin = net->nn[0], nmax = nmin;
    for (size_t i = 1; i < n; i++) {
        if (net->e[i] < emin) emin = net->e[i];
        if (net->e[i] > emax) emax = net->e[i];
        if (net->nn[i] < nmin) nmin = net->nn[i];
        if (net->nn[i] > nmax) nmax = net->nn[i];
    }
    size_t gx = (size_t)((emax - emin) / cell) + 1;
    size_t gy = (size_t)((nmax - nmin) / cell) + 1;
    size_t *start = xcalloc(gx * gy + 1, sizeof *start);
    uint32_t *cellof = xcalloc(n, sizeof *cellof);
    uint32_t *items = xcalloc(n, sizeof *items);
    for (size_t i = 0; i < n; i++) {
        size_t cx = (size_t)((net->e[i] - emin) / cell);
        size_t cy = (size_t)((net->nn[i] - nmin) / cell);
        if (cx >= gx) cx = gx - 1;
        if (cy >= gy) cy = gy - 1;
        cellof[i] = (uint32_t)(cy * gx + cx);
        start[cellof[i] + 1]++;
    }
    for (size_t c = 0; c < gx * gy; c++) /* counting sort into cells */
        start[c + 1] += start[c];
    {
        size_t *fill = xcalloc(gx * gy, sizeof *fill);
        for (size_t i = 0; i < n; i++)
            items[start[cellof[i]] + fill[cellof[i]]++] = (uint32_t)i;
        free(fill);
    }

    net->nb = xcalloc(n * MAX_NB, sizeof *net->nb);
    size_t maxring = gx > gy ? gx : gy;
    for (size_t i = 0; i < n; i++) {
        double best_d[MAX_NB];
        uint32_t best_j[MAX_NB];
        int have = 0;
        int target = n - 1 < (size_t)k ? (int)(n - 1) : k;
        long qx = (long)(cellof[i] % gx), qy = (long)(cellof[i] / gx);
        for (long r = 0; r <= (long)maxring; r++) {
            for (long cy = qy - r; cy <= qy + r; cy++) {
                if (cy < 0 || cy >= (long)gy)
                    continue;
                /* interior rows of the ring visit only its two ends */
                long step = (cy == qy - r || cy == qy + r) ? 1 : 2 * r;
                if (step == 0)
                    step = 1;
                for (long cx = qx - r; cx <= qx + r; cx += step) {
                    if (cx < 0 || cx >= (long)gx)
                        continue;
                    size_t c = (size_t)cy * gx + (size_t)cx;
                    for (size_t t = start[c]; t < start[c + 1]; t++) {
                        uint32_t j = items[t];
                        if (j == i)
                            continue;
                        double de = net->e[j] - net->e[i];
                        double dn = net->nn[j] - net->nn[i];
                        double d2 = de * de + dn * dn;
                        if (have == k && d2 >= best_d[k - 1])
                            continue;
                        int pos = have < k ? have++ : k - 1;
                        while (pos > 0 && best_d[pos - 1] > d2) {
                            best_d[pos] = best_d[pos - 1];
                            best_j[pos] = best_j[pos - 1];
                            pos--;
                        }
                        best_d[pos] = d2;
                        best_j[pos] = j;
                    }
                }
            }
            /* every cell of ring r+1 is at least r cells from the query;
             * a network smaller than k + 1 marks stops when all are in */
            double reach = (double)r * cell;
            if (have == target &&
                (target < k || best_d[k - 1] <= reach * reach))
                break;
        }
        for (int t = 0; t < have; t++)
            net->nb[i * MAX_NB + (size_t)t] = best_j[t];
        for (int t = have; t < MAX_NB; t++)
            net->nb[i * MAX_NB + (size_t)t] = UINT32_MAX;
    }
    free(start);
    free(cellof);
    free(items);
}

static int has_nb(const net_t *net, size_t i, uint32_t j)
{
    for (unsigned t = 0; t < net->nnb[i]; t++)
        if (net->nb[i * MAX_NB + t] == j)
            return 1;
    return 0;
}

/* Level kind: the undirected edge i-j is written once, from i, when j is
 * one of i's neighbours and either j > i or i is not one of j's. */
static int level_edge(const net_t *net, size_t i, unsigned t)
{
    uint32_t j = net->nb[i * MAX_NB + t];
    return j > i || !has_nb(net, j, (uint32_t)i);
}

/* ---- writing ---- */

static void out_id(out_t *o, const net_t *net, size_t i)
{
    out_mem(o, "G", 1);
    out_u64(o, i, net->id_width);
}

static const char *kind_name(enum kind k)
{
    return k == KIND_PLANE ? "plane" : k == KIND_3D ? "3d" : "level";
}

typedef struct {
    uint64_t line, seq;
    const char *what;
    size_t from, to;
    double error; /* m or arc-seconds */
} blunder_t;

typedef struct {
    rng_t r;
    uint64_t left, remaining; /* Knuth's selection sampling, Algorithm S */
    blunder_t *list;
    size_t count;
} picker_t;

/* Decide, observation by observation, whether this one is a blunder, so
 * that exactly K of the T observations are chosen, uniformly. */
static int pick(picker_t *pk)
{
    int hit = pk->left > 0 &&
              rng_uniform(&pk->r) * (double)pk->remaining < (double)pk->left;
    pk->remaining--;
    if (hit)
        pk->left--;
    return hit;
}

static double sign_pm(rng_t *r)
{
    return rng_uniform(r) < 0.5 ? -1.0 : 1.0;
}

static void record(picker_t *pk, uint64_t line, uint64_t seq,
                   const char *what, size_t from, size_t to, double err)
{
    blunder_t *b = &pk->list[pk->count++];
    b->line = line;
    b->seq = seq;
    b->what = what;
    b->from = from;
    b->to = to;
    b->error = err;
}

static void write_header(out_t *o, const params_t *p, const net_t *net,
                         size_t nheld, uint64_t nobs)
{
    char tmp[512];
    out_str(o, "# Synthetic control network from cairn tests/bench/gen.");
    out_nl(o);
    out_str(o, "# Invented data for benchmarks and tests; not a real survey.");
    out_nl(o);
    snprintf(tmp, sizeof tmp,
             "# gen --kind %s --marks %zu --seed %" PRIu64
             " --blunders %zu --start-offset %g%s --spacing %g",
             kind_name(p->kind), p->n, p->seed, p->blunders, p->start_offset,
             p->no_starts ? " --no-starts" : "", p->spacing);
    out_str(o, tmp);
    out_nl(o);
    snprintf(tmp, sizeof tmp,
             "# grid %zu columns, spacing %g m, jitter +-%g m, centre e %.0f"
             " n %.0f; %zu held marks, %" PRIu64 " observations",
             net->side, p->spacing, 0.25 * p->spacing, GRID_E0, GRID_N0,
             nheld, nobs);
    out_str(o, tmp);
    out_nl(o);
    out_str(o, "units m dms");
    out_nl(o);
    if (p->kind == KIND_3D) {
        out_str(o, "option refraction 0.13");
        out_nl(o);
    }
    if (p->kind == KIND_LEVEL)
        out_str(o, "instrument LV1 per-km 0.7mm");
    else
        out_str(o, "instrument TS1 direction 1sec zenith 1.5sec "
                   "distance 1mm+1.5ppm centring 0.6mm height 1mm");
    out_nl(o);
}

static void write_marks(out_t *o, const params_t *p, const net_t *net,
                        rng_t *st)
{
    double a = p->start_offset;
    for (size_t i = 0; i < net->n; i++) {
        int held = net->held[i];
        if (!held && p->no_starts)
            continue;
        /* three draws per mark whatever the kind keeps streams aligned */
        double oe = rng_range(st, -a, a), on = rng_range(st, -a, a),
               oh = rng_range(st, -a, a);
        if (held)
            oe = on = oh = 0.0;
        out_str(o, "mark ");
        out_id(o, net, i);
        if (p->kind != KIND_LEVEL) {
            out_str(o, " e ");
            out_fixed(o, net->e[i] + oe, 4);
            out_str(o, " n ");
            out_fixed(o, net->nn[i] + on, 4);
        }
        if (p->kind != KIND_PLANE) {
            out_str(o, " h ");
            out_fixed(o, net->h[i] + oh, 4);
        }
        if (held)
            out_str(o, p->kind == KIND_PLANE ? " hold en"
                       : p->kind == KIND_3D  ? " hold enh"
                                             : " hold h");
        out_nl(o);
    }
}

/* Setups and sights (plane, 3d). The true values follow FORMAT.md
 * "Models" with scale 1 and no ppm; the noise sigma is the a priori sigma of
 * the same section, evaluated at the true geometry. */
static void write_setups(out_t *o, const params_t *p, const net_t *net,
                         rng_t *noise, rng_t *geo, picker_t *pk)
{
    const double two_c2 = 2.0 * SD_CENTRING * SD_CENTRING;
    uint64_t seq = 0;
    for (size_t i = 0; i < net->n; i++) {
        if (net->nnb[i] == 0)
            continue;
        /* random circle orientation: hz = azimuth - omega */
        double omega = rng_range(geo, 0.0, 2.0 * PI);
        double ih = round_to(rng_range(geo, 1.45, 1.65), 1e-3);
        out_str(o, "at ");
        out_id(o, net, i);
        out_str(o, " inst TS1");
        if (p->kind == KIND_3D) {
            out_str(o, " ih ");
            out_fixed(o, ih, 3);
        }
        out_nl(o);
        for (unsigned t = 0; t < net->nnb[i]; t++) {
            size_t j = net->nb[i * MAX_NB + t];
            double th = round_to(rng_range(geo, 1.50, 1.80), 1e-3);
            double de = net->e[j] - net->e[i], dn = net->nn[j] - net->nn[i];
            double d = sqrt(de * de + dn * dn);
            double az = atan2(de, dn);
            uint64_t line = o->line + 1;

            double hz = az - omega +
                        sqrt(SD_DIR * SD_DIR + two_c2 / (d * d)) *
                            rng_normal(noise);
            if (pick(pk)) {
                double b = sign_pm(&pk->r) * BLUNDER_DIR;
                hz += b;
                record(pk, line, seq + 1, "direction", i, j, b / ARCSEC);
            }
            seq++;
            out_str(o, "to ");
            out_id(o, net, j);
            out_str(o, " hz ");
            out_dms(o, hz, 1);

            if (p->kind == KIND_3D) {
                double dz = (net->h[j] + th) - (net->h[i] + ih);
                double c = d * d / (2.0 * EARTH_R);
                double zen = atan2(d, dz - (1.0 - REFRACTION_K) * c) +
                             sqrt(SD_ZEN * SD_ZEN +
                                  2.0 * SD_HEIGHT * SD_HEIGHT / (d * d)) *
                                 rng_normal(noise);
                if (pick(pk)) {
                    double b = sign_pm(&pk->r) * BLUNDER_ZEN;
                    zen += b;
                    record(pk, line, seq + 1, "zenith", i, j, b / ARCSEC);
                }
                seq++;
                double s = sqrt(d * d + (dz - c) * (dz - c));
                double sd = sqrt(SD_DIST_A * SD_DIST_A +
                                 pow(SD_DIST_PPM * 1e-6 * s, 2) + two_c2);
                s += sd * rng_normal(noise);
                if (pick(pk)) {
                    double b = sign_pm(&pk->r) * BLUNDER_DIST;
                    s += b;
                    record(pk, line, seq + 1, "slope", i, j, b);
                }
                seq++;
                out_str(o, " zen ");
                out_dms(o, zen, 0);
                out_str(o, " slope ");
                out_fixed(o, s, 4);
                out_str(o, " th ");
                out_fixed(o, th, 3);
            } else {
                double sd = sqrt(SD_DIST_A * SD_DIST_A +
                                 pow(SD_DIST_PPM * 1e-6 * d, 2) + two_c2);
                double hd = d + sd * rng_normal(noise);
                if (pick(pk)) {
                    double b = sign_pm(&pk->r) * BLUNDER_DIST;
                    hd += b;
                    record(pk, line, seq + 1, "horiz", i, j, b);
                }
                seq++;
                out_str(o, " horiz ");
                out_fixed(o, hd, 4);
            }
            out_nl(o);
        }
    }
}

/* Levelled rises between neighbouring marks. The levelled route follows
 * roads and paths, so its length is 5-25 % longer than the straight leg;
 * sigma = per-km * sqrt(km) with the booked km. */
static void write_rises(out_t *o, const net_t *net, rng_t *noise, rng_t *geo,
                        picker_t *pk)
{
    uint64_t seq = 0;
    for (size_t i = 0; i < net->n; i++) {
        for (unsigned t = 0; t < net->nnb[i]; t++) {
            if (!level_edge(net, i, t))
                continue;
            size_t j = net->nb[i * MAX_NB + t];
            double de = net->e[j] - net->e[i], dn = net->nn[j] - net->nn[i];
            double km = round_to(sqrt(de * de + dn * dn) *
                                     rng_range(geo, 1.05, 1.25) / 1000.0,
                                 1e-3);
            double rise = net->h[j] - net->h[i] +
                          SD_LEVEL_KM * sqrt(km) * rng_normal(noise);
            if (pick(pk)) {
                double b = sign_pm(&pk->r) * BLUNDER_RISE;
                rise += b;
                record(pk, o->line + 1, seq + 1, "rise", i, j, b);
            }
            seq++;
            out_str(o, "rise ");
            out_id(o, net, i);
            out_str(o, " ");
            out_id(o, net, j);
            out_str(o, " ");
            out_fixed(o, rise, 5);
            out_str(o, " km ");
            out_fixed(o, km, 3);
            out_str(o, " inst LV1");
            out_nl(o);
        }
    }
}

static void write_blunders(out_t *o, const net_t *net, const picker_t *pk)
{
    for (size_t b = 0; b < pk->count; b++) {
        const blunder_t *x = &pk->list[b];
        int angular = x->what[0] == 'd' || x->what[0] == 'z';
        out_str(o, "# blunder: line ");
        out_u64(o, x->line, 1);
        out_str(o, " seq ");
        out_u64(o, x->seq, 1);
        out_str(o, " kind ");
        out_str(o, x->what);
        out_str(o, " from ");
        out_id(o, net, x->from);
        out_str(o, " to ");
        out_id(o, net, x->to);
        out_str(o, " error ");
        if (x->error >= 0)
            out_str(o, "+");
        out_fixed(o, x->error, angular ? 2 : 4);
        out_str(o, angular ? "sec" : "m");
        out_nl(o);
    }
}

static int write_truth(const char *path, const net_t *net)
{
    FILE *f = fopen(path, "w");
    if (!f) {
        fprintf(stderr, "gen: %s: %s\n", path, strerror(errno));
        return 1;
    }
    out_t *o = xcalloc(1, sizeof *o);
    o->f = f;
    out_str(o, "id,e,n,h\n");
    for (size_t i = 0; i < net->n; i++) {
        out_id(o, net, i);
        out_str(o, ",");
        out_fixed(o, net->e[i], 4);
        out_str(o, ",");
        out_fixed(o, net->nn[i], 4);
        out_str(o, ",");
        out_fixed(o, net->h[i], 4);
        out_str(o, "\n");
    }
    out_flush(o);
    int bad = o->failed;
    free(o);
    if (fclose(f) != 0 || bad) {
        fprintf(stderr, "gen: %s: write failed\n", path);
        return 1;
    }
    return 0;
}

/* ---- command line ---- */

static void usage(FILE *f)
{
    fputs("usage: gen [--kind plane|3d|level] [--marks N] [--seed S]\n"
          "           [--blunders K] [--start-offset METRES] [--no-starts]\n"
          "           [--spacing METRES] [--truth FILE.csv] -o FILE.cfb\n"
          "Writes a synthetic cairn field book (use -o - for stdout).\n"
          "Defaults: --kind plane --marks 1000 --seed 1 --blunders 0\n"
          "          --start-offset 0.05 --spacing 250\n",
          f);
}

static int parse_u64(const char *s, uint64_t *v)
{
    char *end;
    if (!s || !*s || *s == '-')
        return 0;
    errno = 0;
    unsigned long long x = strtoull(s, &end, 10);
    if (errno || *end)
        return 0;
    *v = (uint64_t)x;
    return 1;
}

static int parse_double(const char *s, double *v)
{
    char *end;
    if (!s || !*s)
        return 0;
    errno = 0;
    *v = strtod(s, &end);
    return !errno && !*end && isfinite(*v);
}

static int parse_args(int argc, char **argv, params_t *p)
{
    p->kind = KIND_PLANE;
    p->n = 1000;
    p->seed = 1;
    p->blunders = 0;
    p->start_offset = 0.05;
    p->no_starts = 0;
    p->spacing = 250.0;
    p->out_path = NULL;
    p->truth_path = NULL;
    for (int a = 1; a < argc; a++) {
        const char *opt = argv[a];
        const char *val = a + 1 < argc ? argv[a + 1] : NULL;
        uint64_t u;
        if (!strcmp(opt, "--help") || !strcmp(opt, "-h")) {
            usage(stdout);
            exit(0);
        } else if (!strcmp(opt, "--no-starts")) {
            p->no_starts = 1;
            continue;
        }
        if (!val) {
            fprintf(stderr, "gen: %s needs a value\n", opt);
            return 0;
        }
        a++;
        if (!strcmp(opt, "--kind")) {
            if (!strcmp(val, "plane"))
                p->kind = KIND_PLANE;
            else if (!strcmp(val, "3d"))
                p->kind = KIND_3D;
            else if (!strcmp(val, "level"))
                p->kind = KIND_LEVEL;
            else {
                fprintf(stderr, "gen: --kind must be plane, 3d or level\n");
                return 0;
            }
        } else if (!strcmp(opt, "--marks")) {
            /* ids and neighbour lists use 32-bit indices */
            if (!parse_u64(val, &u) || u < 3 || u > 100000000) {
                fprintf(stderr, "gen: --marks must be 3..100000000\n");
                return 0;
            }
            p->n = (size_t)u;
        } else if (!strcmp(opt, "--seed")) {
            if (!parse_u64(val, &p->seed)) {
                fprintf(stderr, "gen: --seed must be an unsigned integer\n");
                return 0;
            }
        } else if (!strcmp(opt, "--blunders")) {
            if (!parse_u64(val, &u) || u > SIZE_MAX / 2) {
                fprintf(stderr, "gen: --blunders must be a count\n");
                return 0;
            }
            p->blunders = (size_t)u;
        } else if (!strcmp(opt, "--start-offset")) {
            if (!parse_double(val, &p->start_offset) ||
                p->start_offset < 0.0) {
                fprintf(stderr, "gen: --start-offset must be >= 0 metres\n");
                return 0;
            }
        } else if (!strcmp(opt, "--spacing")) {
            if (!parse_double(val, &p->spacing) || p->spacing < 10.0 ||
                p->spacing > 100000.0) {
                fprintf(stderr, "gen: --spacing must be 10..100000 metres\n");
                return 0;
            }
        } else if (!strcmp(opt, "-o")) {
            p->out_path = val;
        } else if (!strcmp(opt, "--truth")) {
            p->truth_path = val;
        } else {
            fprintf(stderr, "gen: unknown option %s\n", opt);
            return 0;
        }
    }
    if (!p->out_path) {
        fprintf(stderr, "gen: -o FILE is required\n");
        return 0;
    }
    return 1;
}

int main(int argc, char **argv)
{
    params_t p;
    if (!parse_args(argc, argv, &p)) {
        usage(stderr);
        return 2;
    }

    rng_t geo, noise, starts;
    picker_t pk;
    rng_init(&geo, p.seed, 1);
    rng_init(&noise, p.seed, 2);
    rng_init(&starts, p.seed, 3);
    rng_init(&pk.r, p.seed, 4);

    net_t net;
    memset(&net, 0, sizeof net);
    make_marks(&net, &p, &geo);
    int kmax = p.kind == KIND_LEVEL ? 4 : MAX_NB;
    find_neighbours(&net, p.spacing, kmax);

    /* A total station sights 6-8 of its nearest marks; a level runs to
     * the nearest 4. Fewer when the network is tiny. */
    net.nnb = xcalloc(net.n, 1);
    size_t nheld = 0;
    for (size_t i = 0; i < net.n; i++) {
        unsigned want = p.kind == KIND_LEVEL
                            ? 4u
                            : 6u + (unsigned)(rng_next(&geo) % 3);
        unsigned have = 0;
        while (have < (unsigned)MAX_NB &&
               net.nb[i * MAX_NB + have] != UINT32_MAX)
            have++;
        net.nnb[i] = (unsigned char)(want < have ? want : have);
        nheld += net.held[i];
    }
    uint64_t nobs = 0;
    for (size_t i = 0; i < net.n; i++) {
        if (p.kind == KIND_LEVEL) {
            for (unsigned t = 0; t < net.nnb[i]; t++)
                nobs += (uint64_t)level_edge(&net, i, t);
        } else {
            nobs += (uint64_t)net.nnb[i] * (p.kind == KIND_3D ? 3u : 2u);
        }
    }
    if (p.blunders > nobs) {
        fprintf(stderr, "gen: --blunders %zu exceeds the %" PRIu64
                        " observations\n", p.blunders, nobs);
        return 2;
    }
    FILE *f = strcmp(p.out_path, "-") ? fopen(p.out_path, "w") : stdout;
    if (!f) {
        fprintf(stderr, "gen: %s: %s\n", p.out_path, strerror(errno));
        return 1;
    }
    pk.left = p.blunders;
    pk.remaining = nobs;
    pk.list = xcalloc(p.blunders, sizeof *pk.list);
    pk.count = 0;

    out_t *o = xcalloc(1, sizeof *o); /* 64 KiB buffer: not on the stack */
    o->f = f;
    write_header(o, &p, &net, nheld, nobs);
    write_marks(o, &p, &net, &starts);
    if (p.kind == KIND_LEVEL)
        write_rises(o, &net, &noise, &geo, &pk);
    else
        write_setups(o, &p, &net, &noise, &geo, &pk);
    write_blunders(o, &net, &pk);
    out_flush(o);
    int bad = o->failed;
    if ((f != stdout ? fclose(f) : fflush(f)) != 0 || bad) {
        fprintf(stderr, "gen: %s: write failed\n", p.out_path);
        return 1;
    }
    free(o);

    int rc = p.truth_path ? write_truth(p.truth_path, &net) : 0;
    free(net.e);
    free(net.nn);
    free(net.h);
    free(net.held);
    free(net.nb);
    free(net.nnb);
    free(pk.list);
    return rc;
}
