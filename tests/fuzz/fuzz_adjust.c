/* cairn — libFuzzer harness for the whole path on small inputs: a field
 * book is parsed and validated, then the problem is built, starting
 * coordinates are computed, the network is adjusted, analysed with
 * iterative snooping and diagnosed, as `cairn adjust` does, and
 * everything is freed. Any crash, leak, UB, hang (> 10 s) or excess memory
 * is a finding; errors returned by a stage are the expected outcome for
 * most inputs. Inputs are kept small (at most 400 observations) so that an
 * execution takes milliseconds. Build and run: tests/fuzz/run.sh. */
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

static void adjust(cairn_net *net, cairn_error *err)
{
    cairn_problem *prob = NULL;
    cairn_adjustment *adj = NULL;
    cairn_analysis *an = NULL;
    if (net->nobs > 400 || net->nmarks > 200)
        return;
    if (cairn_problem_build(net, 0, &prob, err))
        goto out;
    if (cairn_start_compute(net, prob->dimension, NULL, err))
        goto out;
    cairn_adjust_options opt;
    cairn_adjust_options_default(&opt);
    opt.max_iterations = 10;
    if (cairn_adjust(net, prob, &opt, &adj, err))
        goto out;
    cairn_analysis_options ao;
    cairn_analysis_options_default(&ao);
    if (cairn_analyse(adj, &ao, &an, err))
        goto out;
    cairn_diagnoses dg = {0};
    cairn_diagnoses_make(adj, an, &dg, err);
    cairn_diagnoses_clear(&dg);
out:
    cairn_analysis_free(&an);
    cairn_adjustment_free(&adj);
    cairn_problem_free(&prob);
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
        if (!rc && err.nerrors == 0)
            adjust(net, &err);
    }
    cairn_net_free(&net);
    cairn_error_clear(&err);
    return 0;
}
