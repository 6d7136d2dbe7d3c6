/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Reference swings in the library (store.h): a marker trajectory with a gap stored and loaded
 * back bit for bit (gaps stay NaN), listed per player, refused a second time and for an
 * unknown player, with one journal entry for the one import. */
#include "testutil.h"

#include "store.h"

#include <string.h>

int
main(void)
{
  GError *e = NULL;
  ArcwiseStore *s = arcwise_store_open(":memory:", ARCWISE_STORE_OPEN_CREATE, &e);
  AW_CHECK(s != NULL);
  if (s == NULL)
    return 1;
  gint64 pid = arcwise_store_add_player(s, "Juno Halvorsen", ARCWISE_HAND_LEFT, AW_WRIST_RIGHT,
                                        NAN, "", &e);
  AW_CHECK(pid > 0);
  enum { N = 50 };
  double t[N], pos[N][3];
  for (int i = 0; i < N; i++) {
    t[i] = 0.005 * (i + 3); /* first frame 4 at 200 Hz */
    for (int k = 0; k < 3; k++)
      pos[i][k] = (i >= 20 && i < 26) ? (double)NAN : 0.1 * k + 1.0 / (i + 7.0);
  }
  ArcwiseReference r = {
    .player_id = pid, .name = "Optical, 2026-03-02", .source_name = "trial07.c3d",
    .source_sha256 = "ab12", .marker = "LWRA", .units = "mm", .up_axis = "+z", .rate_hz = 200,
    .n_frames = N, .n_invalid = 6, .t_s = t, .pos_m = pos,
  };
  gint64 id = arcwise_store_add_reference(s, &r, &e);
  AW_CHECK(id > 0);
  g_clear_error(&e);
  AW_CHECK(arcwise_store_add_reference(s, &r, &e) == 0);
  AW_CHECK(g_error_matches(e, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_EXISTS));
  g_clear_error(&e);
  r.player_id = pid + 100;
  r.marker = "RWRA";
  AW_CHECK(arcwise_store_add_reference(s, &r, &e) == 0 && e != NULL);
  g_clear_error(&e);

  GPtrArray *list = arcwise_store_list_references(s, pid, &e);
  AW_CHECK(list != NULL && list->len == 1);
  if (list != NULL && list->len == 1) {
    const ArcwiseReference *l = g_ptr_array_index(list, 0);
    AW_CHECK(l->id == id && strcmp(l->player_name, "Juno Halvorsen") == 0 && l->t_s == NULL);
    AW_CHECK(l->n_frames == N && l->n_invalid == 6 && strcmp(l->up_axis, "+z") == 0);
  }
  if (list)
    g_ptr_array_unref(list);
  ArcwiseReference *got = arcwise_store_load_reference(s, id, &e);
  AW_CHECK(got != NULL);
  if (got != NULL) {
    AW_CHECK(got->n_frames == N && got->rate_hz == 200 && strcmp(got->marker, "LWRA") == 0);
    for (int i = 0; i < N; i++) {
      AW_CHECK(got->t_s[i] == t[i]);
      for (int k = 0; k < 3; k++)
        AW_CHECK(isnan(pos[i][k]) ? isnan(got->pos_m[i][k]) : got->pos_m[i][k] == pos[i][k]);
    }
  }
  arcwise_reference_free(got);
  AW_CHECK(arcwise_store_load_reference(s, id + 1, &e) == NULL &&
           g_error_matches(e, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_NOT_FOUND));
  g_clear_error(&e);
  GPtrArray *journal = arcwise_store_list_journal(s, &e);
  AW_CHECK(journal != NULL && journal->len == 1);
  if (journal)
    g_ptr_array_unref(journal);
  arcwise_store_close(s);
  return AW_TEST_END();
}
