/*
 * main.c - the pacemap program: dispatch to one command.
 */
#include "cli.h"

#include "pacemap/version.h"

#include <stdio.h>
#include <string.h>

typedef struct cli_entry {
    const char *name;
    int (*run)(int argc, char **argv);
    const char *summary;
} cli_entry;

static const cli_entry commands[] = {
    { "check", pm_cmd_check, "parse and validate a scenario, summarise it" },
    { "bound", pm_cmd_bound, "iteration bound, critical loops, floors for P cores" },
    { "schedule", pm_cmd_schedule, "list-schedule one iteration onto P cores" },
    { "simulate", pm_cmd_simulate, "self-timed simulation of overlapping iterations" },
    { "run", pm_cmd_run, "run the mapping with threads pinned to real cores" },
    { "sweep", pm_cmd_sweep, "period and limiting factor for a range of core counts" },
    { "dot", pm_cmd_dot, "Graphviz DOT of the graph, critical loop marked" },
};

static void main_usage(FILE *out)
{
    fputs("usage: pacemap COMMAND FILE [options]   (pacemap COMMAND -h for details)\n\n"
          "       pacemap --version\n\n"
          "commands:\n", out);
    for (size_t i = 0; i < sizeof commands / sizeof commands[0]; i++)
        fprintf(out, "  %-9s %s\n", commands[i].name, commands[i].summary);
}

int main(int argc, char **argv)
{
    if (argc < 2) {
        main_usage(stderr);
        return CLI_EXIT_USAGE;
    }
    if (strcmp(argv[1], "-h") == 0 || strcmp(argv[1], "--help") == 0) {
        main_usage(stdout);
        return CLI_EXIT_OK;
    }
    if (strcmp(argv[1], "-V") == 0 || strcmp(argv[1], "--version") == 0) {
        printf("pacemap %s\n", PM_VERSION);
        return CLI_EXIT_OK;
    }
    for (size_t i = 0; i < sizeof commands / sizeof commands[0]; i++)
        if (strcmp(argv[1], commands[i].name) == 0)
            return commands[i].run(argc - 1, argv + 1);
    cli_usage_error("unknown command '%s' (see 'pacemap -h')", argv[1]);
    return CLI_EXIT_USAGE;
}
