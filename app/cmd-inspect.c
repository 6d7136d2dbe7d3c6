/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "cli.h"

#include <stdio.h>
#include <string.h>

/* Placeholder until the capture readers land (issue: foundation). */
int
arcwise_cmd_inspect(int argc, char **argv)
{
  if (argc > 1 && strcmp(argv[1], "--help") == 0) {
    printf("Usage: arcwise inspect [--json] FILE...\n");
    return 0;
  }
  return arcwise_cli_fail("inspect", "not implemented yet");
}
