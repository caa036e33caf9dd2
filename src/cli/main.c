/* cairn — the command-line program: subcommand dispatch, --help, --version.
 * Exit codes: enum cairn_exit (core.h), mirrored in cairn(1). */
#include <stdio.h>
#include <string.h>

#include "cairn/cairn.h"
#include "cli.h"

static const cairn_cli_command commands[] = {
    {"adjust", "adjust a project by least squares, write the results", cairn_cli_adjust,
     cairn_cli_adjust_help},
    {"check", "load and validate a project, report field-book checks", cairn_cli_check,
     cairn_cli_check_help},
};
#define NCOMMANDS (sizeof commands / sizeof commands[0])

static void usage(FILE *out)
{
    fprintf(out,
            "usage: cairn COMMAND [ARGS]\n"
            "       cairn help COMMAND | --help | --version\n\n"
            "Least-squares adjustment of survey control networks.\n\n"
            "commands:\n");
    for (size_t i = 0; i < NCOMMANDS; i++)
        fprintf(out, "  %-8s %s\n", commands[i].name, commands[i].summary);
    fprintf(out,
            "\nexit status: 0 ok; 1 adjusted but tests failed or observations flagged;\n"
            "2 usage or input error; 3 adjustment impossible. See cairn(1).\n");
}

static const cairn_cli_command *find(const char *name)
{
    for (size_t i = 0; i < NCOMMANDS; i++)
        if (!strcmp(commands[i].name, name))
            return &commands[i];
    return NULL;
}

int main(int argc, char **argv)
{
    if (argc < 2) {
        usage(stderr);
        return CAIRN_EXIT_INPUT;
    }
    const char *cmd = argv[1];
    if (!strcmp(cmd, "--help") || !strcmp(cmd, "-h")) {
        usage(stdout);
        return CAIRN_EXIT_OK;
    }
    if (!strcmp(cmd, "--version")) {
        printf("cairn %s\n", cairn_version());
        return CAIRN_EXIT_OK;
    }
    if (!strcmp(cmd, "help")) {
        if (argc < 3) {
            usage(stdout);
            return CAIRN_EXIT_OK;
        }
        const cairn_cli_command *c = find(argv[2]);
        if (!c) {
            fprintf(stderr, "cairn: no command '%s' (try cairn --help)\n", argv[2]);
            return CAIRN_EXIT_INPUT;
        }
        c->help(stdout);
        return CAIRN_EXIT_OK;
    }
    const cairn_cli_command *c = find(cmd);
    if (!c) {
        fprintf(stderr, "cairn: unknown command '%s' (try cairn --help)\n", cmd);
        return CAIRN_EXIT_INPUT;
    }
    return c->run(argc - 1, argv + 1);
}
