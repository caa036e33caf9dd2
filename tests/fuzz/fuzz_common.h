/* cairn — shared parts of the libFuzzer harnesses (tests/fuzz/README.md).
 *
 * The sandbox: before the first input, the harness makes a fresh
 * temporary directory, writes a few small field books into it (a good
 * one, one that includes itself, a pair that include each other, one in
 * other units, one full of errors, a chain, and a directory with a .cfb
 * name). The working directory is left alone. The loader's own calls to
 * stat() and fopen() are renamed in its object files (objcopy
 * --redefine-sym, see run.sh) to guards that let only plain names of that
 * directory ([A-Za-z0-9_.-], not starting with '.') through, looked up
 * in that directory, so an input that names
 * /dev/stdin, /proc/..., ../../etc/passwd or a FIFO only gets "cannot
 * read field book". The input itself is written to fuzz.cfb there
 * when (and only when) it names fuzz.cfb, so that self-inclusion of the
 * top-level text is exercised reproducibly.
 *
 * The oracle, beyond the sanitizers: the return value agrees with the
 * error count; every stored diagnostic formats without control bytes or
 * broken UTF-8 (messages go to a terminal); and the loaded net is
 * consistent (indices in range, ids valid, values and precisions finite).
 * A violation aborts with a message on stderr. With CAIRN_FUZZ_PRINT set
 * in the environment the diagnostics of each input are printed. */
#ifndef CAIRN_FUZZ_COMMON_H
#define CAIRN_FUZZ_COMMON_H

#include <stddef.h>
#include <stdint.h>

#include "cairn/cairn.h"

/* Create and fill the sandbox directory (once per process). */
void cairn_fuzz_sandbox(void);
/* Write (or remove) the sandbox copy of the input under `name`: written
 * when the input contains `name`, removed otherwise. */
void cairn_fuzz_stage_input(const char *name, const uint8_t *data, size_t size);
/* Check the result of one load; abort() on any violation. `rc` is what
 * the parse function returned and `before` the error count before it. */
void cairn_fuzz_check(const cairn_net *net, const cairn_error *err, int rc, int before);

#endif
