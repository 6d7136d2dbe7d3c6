/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Inside the store module: the encodings of stored blobs, the import pipeline's hand-over to the
 * writer, and hooks the tests and the benchmark use. Not for the UI. */

#include "store.h"

G_BEGIN_DECLS

/* ---- Codec (store-codec.c; no SQL there) ------------------------------------------------- */

/* zlib (RFC 1950) at level 9 through GIO's GZlibCompressor: lossless, and the stream carries its
 * own Adler-32 check. */
GBytes *arcwise_codec_compress(const void *data, gsize len, GError **error);
GBytes *arcwise_codec_decompress(GBytes *z, gsize expected_len, GError **error);

/* Lower-case hex SHA-256 (65 bytes with the NUL). */
void arcwise_codec_sha256_hex(const void *data, gsize len, char out[65]);

/* A fused path (or the part of it in [t_from_s, t_to_s]) as a self-describing little-endian
 * record, compressed (layout in store-codec.c). It is a cache that re-analysis recomputes from
 * the raw streams, so each double array is kept to a fixed step far below what the sensors
 * resolve: decode(encode(p)) is within half a step of p per value
 * (arcwise_codec_path_step(array), arrays in record order t, pos, vel, q, sigma, share, accel,
 * gyro; a quaternion is renormalised), flags exact; an array with a non-finite or huge value is
 * kept bit-exact. Older records (version 1, all bit-exact) still decode. */
GBytes *arcwise_codec_encode_path(const AwFusedPath *path, double t_from_s, double t_to_s,
                                  GError **error);
/* The same in a given record version (1 or 2): for the tests of older records. */
GBytes *arcwise_codec_encode_path_version(const AwFusedPath *path, double t_from_s,
                                          double t_to_s, guint version, GError **error);
double arcwise_codec_path_step(int array);
AwFusedPath *arcwise_codec_decode_path(GBytes *blob, GError **error);

/* The engine's AwSwing as "key=value" lines (17 significant digits: exact for doubles), and
 * back. Unknown keys are ignored and missing ones stay NaN/0, so a record cached by an older
 * engine still loads. Indices are stored relative to the swing's span start. */
char *arcwise_codec_swing_to_text(const AwSwing *sw);
AwSwing *arcwise_codec_swing_from_text(const char *text);

/* File name as stored: the last component only, never "", "." or "..", no control characters
 * and no separators, at most 200 bytes. Free with g_free. */
char *arcwise_codec_safe_name(const char *path);

/* ---- Import hand-over ---------------------------------------------------------------------- */

typedef struct {
  guint index;                 /* within the recording */
  double span_start_s;         /* depth camera clock */
  double span_end_s;
  GBytes *path_blob;           /* arcwise_codec_encode_path over the span; NULL: not fused */
  GPtrArray *events;           /* ArcwiseSwingEvent*, NULL: not analysed */
  GPtrArray *metrics;          /* ArcwiseSwingMetric*, NULL: not analysed */
  char *swing_text;            /* arcwise_codec_swing_to_text, NULL: not analysed */
  gint64 swing_id;             /* re-analysis: the stored swing this replaces; import: 0 */
} ArcwisePreparedSwing;

typedef struct {
  char *imu_name;              /* arcwise_codec_safe_name of the source */
  char *depth_name;
  gsize imu_size;
  gsize depth_size;
  GBytes *imu_z;               /* compressed original bytes */
  GBytes *depth_z;
  char imu_sha256[65];         /* of the original bytes */
  char depth_sha256[65];
  char content_sha256[65];     /* of the pair: SHA-256 over both hex digests */
  char *engine_version;        /* of the derived results */
  char *settings;
  char settings_sha256[65];
  GPtrArray *swings;           /* ArcwisePreparedSwing* */
} ArcwisePreparedRecording;

ArcwisePreparedSwing *arcwise_prepared_swing_new(void);
void arcwise_prepared_swing_free(ArcwisePreparedSwing *s);
ArcwisePreparedRecording *arcwise_prepared_recording_new(void);
void arcwise_prepared_recording_free(ArcwisePreparedRecording *r);
/* Fills names, sizes, hashes and compressed copies from the original bytes. */
gboolean arcwise_prepared_recording_set_raw(ArcwisePreparedRecording *r, const char *imu_path,
                                            GBytes *imu, const char *depth_path, GBytes *depth,
                                            GError **error);
void arcwise_content_sha256(const char *imu_sha, const char *depth_sha, char out[65]);

/* store.c: is a recording with this content hash stored? (*id_out = its id or 0) */
gboolean arcwise_store_find_recording(ArcwiseStore *store, const char *content_sha256,
                                      gint64 *id_out, GError **error);

/* store.c: writes every prepared recording with its swings, the player, session and club of the
 * target (found or made) and one journal entry, all in ONE transaction. */
gboolean arcwise_store_commit_import(ArcwiseStore *store, const ArcwiseImportTarget *target,
                                     GPtrArray *prepared, const char *journal_detail,
                                     ArcwiseImportResult *result, GError **error);

/* Re-analysis support (store.c). */
typedef struct {
  gint64 recording_id;
  GArray *swing_ids;           /* gint64 */
  GArray *spans;               /* double pairs: start, end */
  ArcwiseHandedness handedness;/* of the player */
  char *club_kind;             /* of the first swing, NULL when none */
  double club_length_m;
} ArcwiseStaleRecording;
void arcwise_stale_recording_free(ArcwiseStaleRecording *r);
GPtrArray *arcwise_store_list_stale(ArcwiseStore *store, gboolean all, const char *engine_version,
                                    const char *settings_sha256, GError **error);
/* Replaces the cached results of the swings in r (by swing_id), one transaction. */
gboolean arcwise_store_replace_results(ArcwiseStore *store, const ArcwisePreparedRecording *r,
                                       GError **error);
gboolean arcwise_store_add_journal(ArcwiseStore *store, const char *kind, const char *detail,
                                   GError **error);

/* Migration hooks for the tests: open without migrating, migrate up to `version`. */
ArcwiseStore *arcwise_store_open_at_version(const char *path, int version, GError **error);
/* Migrates an open library up to `version` (one transaction per step). */
gboolean arcwise_store_migrate_to(ArcwiseStore *store, int version, GError **error);
/* Runs one constant SQL script (tests and the benchmark only; never built from strings). */
gboolean arcwise_store_exec_script(ArcwiseStore *store, const char *sql, GError **error);
/* Canonical schema text (sorted sqlite_master entries) to compare migrated and fresh libraries. */
char *arcwise_store_schema_dump(ArcwiseStore *store, GError **error);

/* Pipeline (store-import.c, no SQL): read + validate + fuse + analyse one capture pair.
 * fixed_spans (pairs of doubles, NULL on import): analyse exactly these spans instead of finding
 * the swings (re-analysis keeps each swing, its notes and tags). */
ArcwisePreparedRecording *arcwise_pipeline_prepare(const char *imu_path, GBytes *imu,
                                                   const char *depth_path, GBytes *depth,
                                                   ArcwiseHandedness handedness,
                                                   const char *club_kind, double club_length_m,
                                                   const GArray *fixed_spans, GError **error);
/* Which engine parts this build has (for messages). */
gboolean arcwise_pipeline_can_fuse(void);
gboolean arcwise_pipeline_can_analyse(void);

G_END_DECLS
