/*
 * cmd_schedule.c - the 'schedule' command (not written yet: exits with a usage error).
 */
#include "cli.h"

int pm_cmd_schedule(int argc, char **argv)
{
    (void)argc;
    (void)argv;
    cli_usage_error("schedule: not available yet");
    return CLI_EXIT_USAGE;
}
