/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "cli.h"

#include <stdio.h>

/* Used when the program is built without the GTK workbench (meson -Dgui=disabled). */
int
arcwise_gui_run(int argc, char **argv)
{
  fprintf(stderr, "arcwise: this build has no workbench window; see 'arcwise --help'\n");
  return 1;
}
