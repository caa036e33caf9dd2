/* cairn — libFuzzer harness for the text field book.
 *
 * Each input is one field book, parsed from memory under the name
 * fuzz.cfb into a fresh cairn_net, then validated as cairn_load_project
 * does (unless the error list is full), checked by the oracle of
 * fuzz_common.c and freed. Includes resolve in the sandbox directory
 * (fuzz_common.h); the input is the file fuzz.cfb there when it names
 * itself. Build and run: tests/fuzz/run.sh. */
#include <stddef.h>
#include <stdint.h>

#include "cairn/cairn.h"
#include "fuzz_common.h"

int LLVMFuzzerInitialize(int *argc, char ***argv);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerInitialize(int *argc, char ***argv)
{
    (void)argc;
    (void)argv;
    cairn_fuzz_sandbox();
    return 0;
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    cairn_error err;
    cairn_fuzz_sandbox();
    cairn_fuzz_stage_input("fuzz.cfb", data, size);
    if (cairn_error_init(&err))
        return 0;
    cairn_net *net = cairn_net_new();
    if (net) {
        int rc = cairn_parse_fieldbook(net, "fuzz.cfb", (const char *)data, size, 0, &err);
        if (!cairn_error_full(&err) && cairn_validate(net, &err))
            rc = -1;
        cairn_fuzz_check(net, &err, rc, 0);
    }
    cairn_net_free(&net);
    cairn_error_clear(&err);
    return 0;
}
