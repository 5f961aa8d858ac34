/*
 * cmd_bound.c - the 'bound' command (not written yet: exits with a usage error).
 */
#include "cli.h"

int pm_cmd_bound(int argc, char **argv)
{
    (void)argc;
    (void)argv;
    cli_usage_error("bound: not available yet");
    return CLI_EXIT_USAGE;
}
