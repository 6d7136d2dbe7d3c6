/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* The library column of the workbench: players, their sessions and their swings as one tree
 * (GtkTreeListModel in a GtkListView), with a search and filters that keep the tree's shape and
 * count what they let through. A session's swing rows are made only when it is opened.
 *
 * Signals:
 *   "swing-selected" (ArcwiseSwingItem *item): a swing row became the selected row.
 *   "player-saved": the player editor opened from a player row saved its player. */

#include <gtk/gtk.h>

#include "arcwise-figures.h"
#include "arcwise-library.h"
#include "arcwise-swing-item.h"

G_BEGIN_DECLS

#define ARCWISE_TYPE_LIBRARY_BROWSER (arcwise_library_browser_get_type())
G_DECLARE_FINAL_TYPE(ArcwiseLibraryBrowser, arcwise_library_browser, ARCWISE, LIBRARY_BROWSER,
                     GtkWidget)

/* The library to show (borrowed; must outlive the browser). Does not list it yet. */
void arcwise_library_browser_set_source(ArcwiseLibraryBrowser *self, ArcwiseLibrarySource *src);
/* Lists the library again (one list query, no query per row), keeping which players and
 * sessions are open and the selected swing (by id). When that swing is gone, the first swing
 * the filters let through is selected. Emits "swing-selected" for the selected swing. */
gboolean arcwise_library_browser_reload(ArcwiseLibraryBrowser *self, GError **error);
void arcwise_library_browser_set_readonly(ArcwiseLibraryBrowser *self, gboolean readonly);
void arcwise_library_browser_set_units(ArcwiseLibraryBrowser *self, ArcwiseUnits units);
void arcwise_library_browser_focus_search(ArcwiseLibraryBrowser *self);

/* Every swing of the library (ArcwiseSwingItem), in tree order: players by name, their sessions
 * newest first, swings in recording order. Borrowed. */
GListModel *arcwise_library_browser_get_swings(ArcwiseLibraryBrowser *self);
/* The swing last selected (borrowed), NULL before any. */
ArcwiseSwingItem *arcwise_library_browser_get_selected(ArcwiseLibraryBrowser *self);
/* Opens its player and session and selects the swing; FALSE when the filters hide it. */
gboolean arcwise_library_browser_select_swing(ArcwiseLibraryBrowser *self, ArcwiseSwingItem *item);
/* The n-th swing the filters let through, in tree order (opened and selected). */
gboolean arcwise_library_browser_select_nth(ArcwiseLibraryBrowser *self, guint n);
/* The next (d > 0) or previous (d < 0) swing the filters let through. */
void arcwise_library_browser_step(ArcwiseLibraryBrowser *self, int d);
/* Opens the player editor for a player, as the edit button of its row does. */
void arcwise_library_browser_edit_player(ArcwiseLibraryBrowser *self, gint64 player_id);
/* How many swings the filters let through (all when none is set). */
guint arcwise_library_browser_get_n_matching(ArcwiseLibraryBrowser *self);

/* For the scripted tests (arcwise-smoke.c). Opens player `player` (1-based, in the order shown;
 * 0 closes every row) and then that player's session `session` (1-based; 0 none); returns the
 * number of swing rows then shown. */
guint arcwise_library_browser_open(ArcwiseLibraryBrowser *self, guint player, guint session);
/* For the scripted tests: selects the row at `pos` (0-based, among the rows shown). */
void arcwise_library_browser_select_row(ArcwiseLibraryBrowser *self, guint pos);
/* The player an import goes into: the player of the selected row (a player row itself, a
 * session's player, a swing's player) by its id (a rename while an import runs must not make a new player), 0 when no row
 * is selected. */
gint64 arcwise_library_browser_get_import_player(ArcwiseLibraryBrowser *self);
/* Sets a filter as a coach would with the controls: "search" (text), "club" (a club kind, or
 * "" for any), "rating" (index of the rating choice), "kind" (0 any, 1 struck, 2 practice),
 * "data" (0 any, 1 camera gaps, 2 quality notes, 3 no notes), "reference" and "tagged" ("1" on).
 * FALSE for an unknown key or club. */
gboolean arcwise_library_browser_set_filter(ArcwiseLibraryBrowser *self, const char *key,
                                            const char *value);
/* The rows now shown, one line each: "P<TAB>player id<TAB>shown count<TAB>total",
 * "S<TAB>session id<TAB>shown count<TAB>total", "W<TAB>swing id"; the selected row has a "*"
 * after its first letter. */
char *arcwise_library_browser_describe_rows(ArcwiseLibraryBrowser *self);

G_END_DECLS
