/*
 * cmd_run.c - the 'run' command (not written yet: exits with a usage error).
 */
#include "cli.h"

int pm_cmd_run(int argc, char **argv)
{
    (void)argc;
    (void)argv;
    cli_usage_error("run: not available yet");
    return CLI_EXIT_USAGE;
}
