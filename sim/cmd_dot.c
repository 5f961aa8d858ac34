/*
 * cmd_dot.c - the 'dot' command (not written yet: exits with a usage error).
 */
#include "cli.h"

int pm_cmd_dot(int argc, char **argv)
{
    (void)argc;
    (void)argv;
    cli_usage_error("dot: not available yet");
    return CLI_EXIT_USAGE;
}
