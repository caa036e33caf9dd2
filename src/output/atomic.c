/* Atomic writing of result files: every file is written to a temporary in
 * the target directory (so rename(2) stays within one file system and is
 * atomic, POSIX.1-2017 rename()), flushed to disk, and renamed into place
 * only when all of the set were written (DESIGN.md "Reliability"). */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>
#ifdef __GLIBC__
#include <stdio_ext.h>
#endif

#include "cairn/output.h"

/* Stream buffer of a result file: results of a national network are
 * hundreds of megabytes written in short pieces. */
#define OUT_BUFSIZE (1u << 20)

typedef struct {
    char *tmp;     /* temporary path, or NULL once renamed */
    char *final;   /* final path */
    FILE *f;
} outfile;

struct cairn_outset {
    char *dir;
    outfile *files;
    size_t nfiles, cap;
};

static char *join(const char *dir, const char *a, const char *b)
{
    size_t n = strlen(dir) + strlen(a) + strlen(b) + 2;
    char *s = malloc(n);
    if (s)
        snprintf(s, n, "%s/%s%s", dir, a, b);
    return s;
}

cairn_outset *cairn_outset_new(const char *dir, cairn_error *err)
{
    struct stat st;
    if (stat(dir, &st) != 0) {
        if (errno != ENOENT || mkdir(dir, 0777) != 0) {
            cairn_error_add(err, CAIRN_SEV_ERROR, dir, 0, 0,
                            "cannot create the results directory: %s", strerror(errno));
            return NULL;
        }
    } else if (!S_ISDIR(st.st_mode)) {
        cairn_error_add(err, CAIRN_SEV_ERROR, dir, 0, 0, "not a directory");
        return NULL;
    }
    cairn_outset *set = calloc(1, sizeof *set);
    if (!set || !(set->dir = cairn_strdup(dir))) {
        free(set);
        cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory");
        return NULL;
    }
    return set;
}

FILE *cairn_outset_open(cairn_outset *set, const char *name, cairn_error *err)
{
    if (cairn_grow((void **)&set->files, &set->cap, set->nfiles + 1, sizeof *set->files)) {
        cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory");
        return NULL;
    }
    outfile *o = &set->files[set->nfiles];
    memset(o, 0, sizeof *o);
    char pattern[300];
    snprintf(pattern, sizeof pattern, ".%s.tmpXXXXXX", name);
    o->tmp = join(set->dir, pattern, "");
    o->final = join(set->dir, name, "");
    if (!o->tmp || !o->final) {
        free(o->tmp);
        free(o->final);
        cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory");
        return NULL;
    }
    int fd = mkstemp(o->tmp);
    if (fd < 0 || !(o->f = fdopen(fd, "w"))) {
        cairn_error_add(err, CAIRN_SEV_ERROR, o->final, 0, 0, "cannot write: %s",
                        strerror(errno));
        if (fd >= 0) {
            close(fd);
            unlink(o->tmp);
        }
        free(o->tmp);
        free(o->final);
        return NULL;
    }
    /* mkstemp creates 0600; results are ordinary files */
    (void)fchmod(fd, 0644);
    (void)setvbuf(o->f, NULL, _IOFBF, OUT_BUFSIZE);
#ifdef __GLIBC__
    /* Only this thread ever writes the stream, but OpenBLAS has started
     * threads, so glibc would take the stream lock on every fputs and
     * fputc: tens of millions of atomic operations at 10^5 marks.
     * __fsetlocking (glibc, also musl) leaves the locking to us. */
    (void)__fsetlocking(o->f, FSETLOCKING_BYCALLER);
#endif
    set->nfiles++;
    return o->f;
}

int cairn_outset_commit(cairn_outset *set, cairn_error *err)
{
    /* close everything first: a full disk shows up at fflush/fclose */
    int rc = 0;
    for (size_t i = 0; i < set->nfiles; i++) {
        outfile *o = &set->files[i];
        if (!o->f)
            continue;
        int bad = ferror(o->f) || fflush(o->f) != 0 || fsync(fileno(o->f)) != 0;
        if (fclose(o->f) != 0)
            bad = 1;
        o->f = NULL;
        if (bad) {
            cairn_error_add(err, CAIRN_SEV_ERROR, o->final, 0, 0,
                            "write failed: %s", strerror(errno));
            rc = -1;
        }
    }
    for (size_t i = 0; i < set->nfiles && rc == 0; i++) {
        outfile *o = &set->files[i];
        if (rename(o->tmp, o->final) != 0) {
            cairn_error_add(err, CAIRN_SEV_ERROR, o->final, 0, 0, "cannot rename "
                            "into place: %s", strerror(errno));
            rc = -1;
            break;
        }
        free(o->tmp);
        o->tmp = NULL;
    }
    return rc;
}

void cairn_outset_free(cairn_outset **pset)
{
    if (!pset || !*pset)
        return;
    cairn_outset *set = *pset;
    for (size_t i = 0; i < set->nfiles; i++) {
        outfile *o = &set->files[i];
        if (o->f)
            fclose(o->f);
        if (o->tmp) {
            unlink(o->tmp);
            free(o->tmp);
        }
        free(o->final);
    }
    free(set->files);
    free(set->dir);
    free(set);
    *pset = NULL;
}
