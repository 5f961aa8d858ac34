/*
 * cmd_simulate.c - the 'simulate' command (not written yet: exits with a usage error).
 */
#include "cli.h"

int pm_cmd_simulate(int argc, char **argv)
{
    (void)argc;
    (void)argv;
    cli_usage_error("simulate: not available yet");
    return CLI_EXIT_USAGE;
}
