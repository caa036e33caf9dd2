/* cairn — shared parts of the libFuzzer harnesses: the sandbox directory,
 * the wrapped stat()/fopen() and the oracle (see fuzz_common.h). Harness
 * code, not library code: it may print and abort. */
#define _GNU_SOURCE /* memmem */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "fuzz_common.h"

/* The library objects' references to stat and fopen are renamed to these
 * (objcopy --redefine-sym in run.sh); everything else, libFuzzer included,
 * still calls the C library's own. */
int cairn_fuzz_stat(const char *path, struct stat *sb);
FILE *cairn_fuzz_fopen(const char *path, const char *mode);

static char sandbox_dir[256];

/* A plain name of the sandbox directory. */
static int allowed(const char *path)
{
    if (!path || !path[0] || path[0] == '.' || strlen(path) > 64)
        return 0;
    for (const char *p = path; *p; p++) {
        char ch = *p;
        if (!((ch >= 'a' && ch <= 'z') || (ch >= 'A' && ch <= 'Z') ||
              (ch >= '0' && ch <= '9') || ch == '_' || ch == '-' || ch == '.'))
            return 0;
    }
    return 1;
}

/* The sandbox path of a plain name, or NULL (errno set) for any other. */
static const char *in_sandbox(const char *path, char *buf, size_t n)
{
    if (!sandbox_dir[0] || !allowed(path)) {
        errno = EACCES;
        return NULL;
    }
    snprintf(buf, n, "%s/%s", sandbox_dir, path);
    return buf;
}

int cairn_fuzz_stat(const char *path, struct stat *sb)
{
    char buf[512];
    const char *p = in_sandbox(path, buf, sizeof buf);
    return p ? stat(p, sb) : -1;
}

FILE *cairn_fuzz_fopen(const char *path, const char *mode)
{
    char buf[512];
    const char *p = in_sandbox(path, buf, sizeof buf);
    if (p && strcmp(mode, "rb")) {
        errno = EACCES;
        p = NULL;
    }
    return p ? fopen(p, mode) : NULL;
}

static void put(const char *name, const char *text)
{
    char buf[512];
    FILE *fp = fopen(in_sandbox(name, buf, sizeof buf), "w");
    if (!fp || fputs(text, fp) == EOF || fclose(fp)) {
        perror(name);
        abort();
    }
}

static void cleanup(void)
{
    static const char *const files[] = {
        "good.cfb", "self.cfb", "loop1.cfb", "loop2.cfb", "units.cfb", "bad.cfb",
        "chain1.cfb", "chain2.cfb", "chain3.cfb", "empty.cfb", "fuzz.cfb",
        "fuzz.xml", "dir.cfb", NULL};
    char buf[512];
    for (int i = 0; files[i] && sandbox_dir[0]; i++)
        if (unlink(in_sandbox(files[i], buf, sizeof buf)) && errno == EISDIR)
            rmdir(buf);
    if (sandbox_dir[0])
        rmdir(sandbox_dir);
}

void cairn_fuzz_sandbox(void)
{
    char buf[512];
    if (sandbox_dir[0])
        return;
    const char *tmp = getenv("TMPDIR");
    snprintf(sandbox_dir, sizeof sandbox_dir, "%s/cairn-fuzz-XXXXXX",
             tmp && tmp[0] && strlen(tmp) < 200 ? tmp : "/tmp");
    if (!mkdtemp(sandbox_dir)) {
        perror("cairn fuzz sandbox");
        abort();
    }
    atexit(cleanup);
    put("good.cfb",
        "# a small good book\n"
        "instrument TS9 direction 1sec zenith 1.5sec distance 1mm+1.5ppm centring 0.6mm\n"
        "instrument LV9 per-km 0.7mm\n"
        "mark G1 e 100.000 n 200.000 h 10.000 hold enh desc \"pin\"\n"
        "mark G2 e 150.000 n 260.000 sd-en 5mm\n"
        "at G1 inst TS9 ih 1.5\n"
        "to G2 hz 0.0000 zen 90.0112 slope 78.1101 th 1.6\n"
        "to G3 hz 45.3010 horiz 60.334\n"
        "angle G3 G1 G2 45.3010 sd 2sec\n"
        "azimuth G1 G2 39.4824 sd 3sec\n"
        "rise G1 G3 0.5321 km 0.230 inst LV9\n");
    put("self.cfb", "mark S1\nfieldbook self.cfb\n");
    put("loop1.cfb", "fieldbook loop2.cfb\n");
    put("loop2.cfb", "rise L1 L2 1.0 sd 1mm\nfieldbook loop1.cfb\n");
    put("units.cfb", "units ft gon\nmark U1 e 10 n 20\nrise U1 G1 0.5 setups 3 sd 2mm\n");
    put("bad.cfb", "mark\nto X hz 1\nunits q r\ninstrument T\nangle A A A 1\n\"open\n");
    put("chain1.cfb", "fieldbook chain2.cfb\nmark C1\n");
    put("chain2.cfb", "fieldbook chain3.cfb\nfieldbook good.cfb\n");
    put("chain3.cfb", "fieldbook good.cfb\noption scale 1.0001\n");
    put("empty.cfb", "");
    if (mkdir(in_sandbox("dir.cfb", buf, sizeof buf), 0700)) {
        perror("dir.cfb");
        abort();
    }
}

void cairn_fuzz_stage_input(const char *name, const uint8_t *data, size_t size)
{
    char buf[512];
    const char *path = in_sandbox(name, buf, sizeof buf);
    if (!path)
        abort();
    if (size && memmem(data, size, name, strlen(name))) {
        FILE *fp = fopen(path, "wb");
        if (!fp || fwrite(data, 1, size, fp) != size || fclose(fp)) {
            perror(path);
            abort();
        }
    } else {
        unlink(path);
    }
}

/* ---------------------------------------------------------------- */

static void fail(const char *what, const char *detail)
{
    fprintf(stderr, "cairn fuzz oracle: %s%s%s\n", what, detail ? ": " : "",
            detail ? detail : "");
    abort();
}

/* Strict UTF-8 (no overlongs, surrogates or code points past U+10FFFF);
 * a small decoder of its own, so as not to test the library with itself. */
static int utf8(const char *s)
{
    const unsigned char *p = (const unsigned char *)s;
    size_t n = strlen(s);
    for (size_t i = 0; i < n;) {
        unsigned c = p[i], len, cp, min;
        if (c < 0x80) { i++; continue; }
        if ((c & 0xe0) == 0xc0) { len = 2; cp = c & 0x1f; min = 0x80; }
        else if ((c & 0xf0) == 0xe0) { len = 3; cp = c & 0x0f; min = 0x800; }
        else if ((c & 0xf8) == 0xf0) { len = 4; cp = c & 0x07; min = 0x10000; }
        else return 0;
        if (i + len > n)
            return 0;
        for (unsigned k = 1; k < len; k++) {
            if ((p[i + k] & 0xc0) != 0x80)
                return 0;
            cp = (cp << 6) | (p[i + k] & 0x3f);
        }
        if (cp < min || cp > 0x10ffff || (cp >= 0xd800 && cp <= 0xdfff))
            return 0;
        i += len;
    }
    return 1;
}

/* Valid UTF-8 without control bytes (tab and newline included): safe to
 * print on a terminal as one line. */
static int printable(const char *s)
{
    for (const unsigned char *p = (const unsigned char *)s; *p; p++)
        if (*p < 0x20 || *p == 0x7f)
            return 0;
    return utf8(s);
}

static int fin(double x) { return isfinite(x); }
static int sdok(const cairn_sd *sd)
{
    return fin(sd->length) && fin(sd->angle) && fin(sd->ppm) && sd->length >= 0 &&
           sd->angle >= 0 && sd->ppm >= 0 && !(sd->has & ~7u);
}

static void check_src(const cairn_net *net, const cairn_src *s, const char *what)
{
    if (!s->file)
        fail(what, "source without a file");
    int known = 0;
    for (size_t i = 0; i < net->nfiles; i++)
        if (net->files[i] == s->file)
            known = 1;
    if (!known)
        fail(what, "source file not in the net's file list");
    if (s->line < 0 || s->col < 0)
        fail(what, "negative line or column");
}

void cairn_fuzz_check(const cairn_net *net, const cairn_error *err, int rc, int before)
{
    char buf[CAIRN_PATH_MAX + CAIRN_MSG_MAX + 64];
    if ((rc != 0) != (err->nerrors > before))
        fail("return value disagrees with the error count", NULL);
    if (err->ndiag < 0 || err->ndiag > 2 * CAIRN_MAX_ERRORS)
        fail("diagnostic count out of range", NULL);
    static int print = -1;
    if (print < 0)
        print = getenv("CAIRN_FUZZ_PRINT") != NULL;
    for (int i = 0; i < err->ndiag; i++) {
        const cairn_diag *d = &err->diag[i];
        cairn_diag_format(d, buf, sizeof buf);
        if (print)
            fprintf(stderr, "%s\n", buf);
        if (!d->message[0])
            fail("empty diagnostic", buf);
        if (!printable(d->message) || !printable(d->file))
            fail("diagnostic with control bytes or invalid UTF-8", buf);
        if (d->line < 0 || d->col < 0)
            fail("diagnostic with a negative position", buf);
    }
    if (!net)
        return;
    if (net->title && !utf8(net->title))
        fail("title is not valid UTF-8", NULL);
    if (net->description && !utf8(net->description))
        fail("description is not valid UTF-8", NULL);
    if ((unsigned)net->length_unit > 2 || (unsigned)net->angle_unit > 2)
        fail("bad project units", NULL);
    const cairn_options *o = &net->opt;
    if (o->dimension < 0 || o->dimension > 3 || !fin(o->refraction) || !(o->scale > 0) ||
        !fin(o->scale) || !(o->confidence > 0 && o->confidence < 1) ||
        !(o->alpha > 0 && o->alpha < 1) || !(o->power > 0 && o->power < 1) ||
        !(o->global_alpha > 0 && o->global_alpha < 1) || !sdok(&o->tolerance) ||
        o->max_iterations < 1 || !fin(o->loop_allowance) || o->loop_allowance < 0)
        fail("options out of range", NULL);
    for (size_t i = 0; i < net->nmarks; i++) {
        const cairn_mark *m = &net->marks[i];
        if (!cairn_id_valid(m->id))
            fail("invalid mark id", m->id);
        if (cairn_net_find_mark(net, m->id) != (int)i)
            fail("mark index does not find the mark", m->id);
        if (!fin(m->e) || !fin(m->n) || !fin(m->h) || !fin(m->sd_en) || !fin(m->sd_h) ||
            m->sd_en < 0 || m->sd_h < 0)
            fail("mark value not finite", m->id);
        if ((m->hold & ~m->given) || (m->given & ~7u))
            fail("mark holds what it was not given", m->id);
        if (m->desc && !utf8(m->desc))
            fail("mark desc is not valid UTF-8", m->id);
        check_src(net, &m->ref, "mark ref");
        if (m->def.line)
            check_src(net, &m->def, "mark def");
    }
    for (size_t i = 0; i < net->ninsts; i++) {
        const cairn_instrument *in = &net->insts[i];
        if (!cairn_id_valid(in->id))
            fail("invalid instrument id", in->id);
        if (cairn_net_find_inst(net, in->id) != (int)i)
            fail("instrument index does not find the instrument", in->id);
        if (!fin(in->direction) || !fin(in->zenith) || !fin(in->dist_a) || !fin(in->dist_b) ||
            !fin(in->centring) || !fin(in->height) || !fin(in->per_km) ||
            !fin(in->per_setup) || in->direction < 0 || in->zenith < 0 || in->dist_a < 0 ||
            in->dist_b < 0 || in->centring < 0 || in->height < 0 || in->per_km < 0 ||
            in->per_setup < 0)
            fail("instrument precision not finite and non-negative", in->id);
        check_src(net, &in->src, "instrument");
    }
    for (size_t i = 0; i < net->nsetups; i++) {
        const cairn_setup *s = &net->setups[i];
        if (s->at < 0 || (size_t)s->at >= net->nmarks)
            fail("setup mark out of range", NULL);
        if (s->inst < -1 || (s->inst >= 0 && (size_t)s->inst >= net->ninsts))
            fail("setup instrument out of range", NULL);
        if (!fin(s->ih) || !fin(s->ppm))
            fail("setup value not finite", NULL);
        check_src(net, &s->src, "setup");
    }
    for (size_t i = 0; i < net->nobs; i++) {
        const cairn_obs *b = &net->obs[i];
        snprintf(buf, sizeof buf, "observation %zu (%s:%d)", i + 1,
                 b->src.file ? b->src.file : "?", b->src.line);
        if ((unsigned)b->kind > CAIRN_OBS_RISE || b->kind == CAIRN_OBS_TRIG_RISE)
            fail("booked observation of a derived kind", buf);
        int m[3] = {b->at, b->from, b->to};
        for (int k = 0; k < 3; k++)
            if (m[k] < -1 || (m[k] >= 0 && (size_t)m[k] >= net->nmarks))
                fail("mark index out of range", buf);
        if (b->setup < -1 || (b->setup >= 0 && (size_t)b->setup >= net->nsetups))
            fail("setup index out of range", buf);
        if (b->inst < -1 || (b->inst >= 0 && (size_t)b->inst >= net->ninsts))
            fail("instrument index out of range", buf);
        if (b->sight < -1 || b->sight >= net->nsights)
            fail("sight number out of range", buf);
        if (!fin(b->value) || !fin(b->ih) || !fin(b->th) || !fin(b->ppm) || !fin(b->km) ||
            b->km < 0 || b->setups < 0 || !sdok(&b->sd))
            fail("observation value not finite", buf);
        if (b->face != 1 && b->face != 2)
            fail("face not 1 or 2", buf);
        check_src(net, &b->src, "observation");
    }
}
