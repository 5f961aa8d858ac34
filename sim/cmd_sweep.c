/*
 * cmd_sweep.c - the 'sweep' command (not written yet: exits with a usage error).
 */
#include "cli.h"

int pm_cmd_sweep(int argc, char **argv)
{
    (void)argc;
    (void)argv;
    cli_usage_error("sweep: not available yet");
    return CLI_EXIT_USAGE;
}
