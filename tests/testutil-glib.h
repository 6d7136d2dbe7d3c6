/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Test helpers that need GLib (tests of the store, the workbench and the library's damage
 * cases). Header-only, like testutil.h. */

#include <glib.h>

/* SHA-256 (FIPS 180-4, computed by GLib's GChecksum, independent of the store's own codec) of a
 * whole file as lower-case hex, or "" when the file cannot be read. g_free the result. */
static inline char *
aw_test_file_sha(const char *path)
{
  char *data = NULL;
  gsize len = 0;
  if (!g_file_get_contents(path, &data, &len, NULL))
    return g_strdup("");
  char *hex = g_compute_checksum_for_data(G_CHECKSUM_SHA256, (const guchar *)data, len);
  g_free(data);
  return hex;
}
