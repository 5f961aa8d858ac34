/*
 * cmd_check.c - the 'check' command (not written yet: exits with a usage error).
 */
#include "cli.h"

int pm_cmd_check(int argc, char **argv)
{
    (void)argc;
    (void)argv;
    cli_usage_error("check: not available yet");
    return CLI_EXIT_USAGE;
}
