/* SPDX-License-Identifier: GPL-3.0-or-later */
/* `arcwise library import-c3d` and `arcwise library references`: reference swings from optical
 * motion capture (C3D), kept apart from the capture recordings (reference-swing.h). */
#include "cli.h"
#include "reference-swing.h"
#include "store.h"

#include <stdio.h>
#include <string.h>

#define CMD "library"

int
arcwise_library_import_c3d(const char *path, int argc, char **argv)
{
  const char *file = NULL, *player = NULL, *marker = NULL, *name = NULL, *up = NULL;
  const char *units = NULL;
  bool keep = false;
  for (int i = 1; i < argc; i++) {
    const char *a = argv[i];
    if (strcmp(a, "--player") == 0 && i + 1 < argc)
      player = argv[++i];
    else if (strcmp(a, "--marker") == 0 && i + 1 < argc)
      marker = argv[++i];
    else if (strcmp(a, "--name") == 0 && i + 1 < argc)
      name = argv[++i];
    else if (strcmp(a, "--up") == 0 && i + 1 < argc)
      up = argv[++i];
    else if (strcmp(a, "--units-if-missing") == 0 && i + 1 < argc)
      units = argv[++i];
    else if (strcmp(a, "--keep-flagged") == 0)
      keep = true;
    else if (a[0] == '-')
      return arcwise_cli_usage_error(CMD, "import-c3d: unknown option '%s'", a);
    else if (file == NULL)
      file = a;
    else
      return arcwise_cli_usage_error(CMD, "import-c3d takes one C3D file");
  }
  if (file == NULL || player == NULL)
    return arcwise_cli_usage_error(CMD, "import-c3d needs FILE and --player NAME");
  char up_buf[3];
  if (up != NULL && !arcwise_reference_parse_up(up, up_buf))
    return arcwise_cli_usage_error(CMD, "--up is one of +x, -x, +y, -y, +z, -z");
  char msg[1200];
  ArcwiseReference *r = arcwise_reference_from_c3d(file, marker, units, keep, up, msg, sizeof msg);
  if (r == NULL)
    return arcwise_cli_fail(CMD, "%s", msg);
  GError *e = NULL;
  ArcwiseStore *s = arcwise_store_open(path, ARCWISE_STORE_OPEN_DEFAULT, &e);
  int rc = 0;
  if (s == NULL) {
    rc = arcwise_cli_fail(CMD, "%s", e->message);
  } else {
    r->player_id = arcwise_store_find_player(s, player, &e);
    if (r->player_id == 0) {
      rc = e ? arcwise_cli_fail(CMD, "%s", e->message)
             : arcwise_cli_fail(CMD, "no player '%s' (add them with 'arcwise library add-player')",
                                player);
    } else {
      if (name != NULL) {
        g_free(r->name);
        r->name = g_strdup(name);
      }
      gint64 id = arcwise_store_add_reference(s, r, &e);
      if (id == 0)
        rc = arcwise_cli_fail(CMD, "%s", e->message);
      else
        printf("reference %" G_GINT64_FORMAT ": '%s' for %s, marker %s, %u frames at %g Hz "
               "(%u invalid, kept as gaps), read in %s, up %s\n", id, r->name, player, r->marker,
               r->n_frames, r->rate_hz, r->n_invalid, r->units, r->up_axis);
    }
    arcwise_store_close(s);
  }
  g_clear_error(&e);
  arcwise_reference_free(r);
  return rc;
}

int
arcwise_library_references(const char *path, int argc, char **argv)
{
  const char *player = NULL;
  for (int i = 1; i < argc; i++) {
    if (strcmp(argv[i], "--player") == 0 && i + 1 < argc)
      player = argv[++i];
    else
      return arcwise_cli_usage_error(CMD, "references: unknown argument '%s'", argv[i]);
  }
  GError *e = NULL;
  ArcwiseStore *s = arcwise_store_open(path, ARCWISE_STORE_OPEN_READONLY, &e);
  if (s == NULL) {
    int rc = arcwise_cli_fail(CMD, "%s", e->message);
    g_error_free(e);
    return rc;
  }
  gint64 pid = 0;
  int rc = 0;
  if (player != NULL && (pid = arcwise_store_find_player(s, player, &e)) == 0)
    rc = arcwise_cli_fail(CMD, "no player '%s'", player);
  GPtrArray *list = rc == 0 ? arcwise_store_list_references(s, pid, &e) : NULL;
  if (rc == 0 && list == NULL)
    rc = arcwise_cli_fail(CMD, "%s", e->message);
  for (guint i = 0; list != NULL && i < list->len; i++) {
    const ArcwiseReference *r = g_ptr_array_index(list, i);
    printf("%" G_GINT64_FORMAT "\t%s\t%s\tmarker %s of %s\t%u frames at %g Hz, %u invalid\t"
           "up %s\timported %s\n", r->id, r->player_name, r->name, r->marker, r->source_name,
           r->n_frames, r->rate_hz, r->n_invalid, r->up_axis, r->imported_utc);
  }
  if (list != NULL)
    g_ptr_array_unref(list);
  g_clear_error(&e);
  arcwise_store_close(s);
  return rc;
}
