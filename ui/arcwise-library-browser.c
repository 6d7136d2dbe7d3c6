/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The library column: a player / session / swing tree with search and filters (see
 * arcwise-library-browser.h).
 *
 * Model: the one list of the library's swings is grouped once into player and session nodes
 * (ArcwiseLibraryNode). The tree's root is a filter model over the players; a row's children are
 * a filter model over the node's children, made by the GtkTreeListModel only when the row is
 * opened (or asked whether it can open). A change of search or filters marks each swing once,
 * counts per node, and tells the two shared filters that they changed: every open row keeps its
 * place and openness, and rows of nodes with nothing left are hidden. */
#include "arcwise-library-browser.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "arcwise/analysis.h"

/* ---- player and session nodes ----------------------------------------------------------- */

typedef enum { NODE_PLAYER, NODE_SESSION } NodeKind;

#define ARCWISE_TYPE_LIBRARY_NODE (arcwise_library_node_get_type())
G_DECLARE_FINAL_TYPE(ArcwiseLibraryNode, arcwise_library_node, ARCWISE, LIBRARY_NODE, GObject)

struct _ArcwiseLibraryNode {
  GObject parent_instance;
  NodeKind kind;
  gint64 id;
  gint64 player_id;
  char *name;          /* player name; session date (ISO 8601) */
  char *place;         /* session place, "" when not given */
  int handed;          /* player: +1 right, -1 left */
  guint n_total;       /* swings under the node */
  guint n_match;       /* ... that the filters let through */
  guint n_sessions;    /* player: sessions */
  gboolean name_match; /* player without swings: the search matches the name */
  GListStore *children;  /* player: ArcwiseLibraryNode sessions; session: ArcwiseSwingItem */
};

enum { NODE_PROP_0, NODE_PROP_N_MATCH, NODE_N_PROPS };
static GParamSpec *node_props[NODE_N_PROPS];

G_DEFINE_FINAL_TYPE(ArcwiseLibraryNode, arcwise_library_node, G_TYPE_OBJECT)

static void
node_get_property(GObject *o, guint id, GValue *v, GParamSpec *p)
{
  if (id == NODE_PROP_N_MATCH)
    g_value_set_uint(v, ARCWISE_LIBRARY_NODE(o)->n_match);
  else
    G_OBJECT_WARN_INVALID_PROPERTY_ID(o, id, p);
}

static void
node_finalize(GObject *o)
{
  ArcwiseLibraryNode *n = ARCWISE_LIBRARY_NODE(o);
  g_free(n->name);
  g_free(n->place);
  g_clear_object(&n->children);
  G_OBJECT_CLASS(arcwise_library_node_parent_class)->finalize(o);
}

static void
arcwise_library_node_class_init(ArcwiseLibraryNodeClass *klass)
{
  GObjectClass *oc = G_OBJECT_CLASS(klass);
  oc->get_property = node_get_property;
  oc->finalize = node_finalize;
  node_props[NODE_PROP_N_MATCH] = g_param_spec_uint("n-match", NULL, NULL, 0, G_MAXUINT, 0,
                                                    G_PARAM_READABLE | G_PARAM_STATIC_STRINGS |
                                                    G_PARAM_EXPLICIT_NOTIFY);
  g_object_class_install_properties(oc, NODE_N_PROPS, node_props);
}

static void
arcwise_library_node_init(ArcwiseLibraryNode *n)
{
}

static ArcwiseLibraryNode *
node_new(NodeKind kind, gint64 id, const char *name, const char *place)
{
  ArcwiseLibraryNode *n = g_object_new(ARCWISE_TYPE_LIBRARY_NODE, NULL);
  n->kind = kind;
  n->id = id;
  n->name = g_strdup(name ? name : "");
  n->place = g_strdup(place ? place : "");
  n->children = g_list_store_new(kind == NODE_PLAYER ? ARCWISE_TYPE_LIBRARY_NODE
                                                     : ARCWISE_TYPE_SWING_ITEM);
  return n;
}

static void
node_set_match(ArcwiseLibraryNode *n, guint m)
{
  if (n->n_match == m)
    return;
  n->n_match = m;
  g_object_notify_by_pspec(G_OBJECT(n), node_props[NODE_PROP_N_MATCH]);
}

/* ---- the browser ------------------------------------------------------------------------ */

/* Choices of the rating filter, in the order of the dropdown. */
enum { RATING_ANY, RATING_UNRATED, RATING_3, RATING_4, RATING_5 };
enum { KIND_ANY, KIND_STRUCK, KIND_PRACTICE };
enum { DATA_ANY, DATA_GAPS, DATA_NOTES, DATA_CLEAN };

struct _ArcwiseLibraryBrowser {
  GtkWidget parent_instance;

  /* Template widgets */
  GtkSearchEntry *search_entry;
  GtkDropDown *club_dropdown;
  GtkDropDown *rating_dropdown;
  GtkDropDown *kind_dropdown;
  GtkDropDown *data_dropdown;
  GtkToggleButton *reference_toggle;
  GtkToggleButton *tagged_toggle;
  GtkButton *clear_button;
  GtkLabel *count_label;
  GtkListView *tree_view;
  GtkLabel *status_label;

  /* Borrowed */
  ArcwiseLibrarySource *source;

  /* Owned */
  GListStore *swings;             /* every ArcwiseSwingItem, tree order */
  GListStore *players;            /* ArcwiseLibraryNode (players), by name */
  GPtrArray *sessions;            /* ArcwiseLibraryNode (sessions), every one, borrowed refs */
  GtkCustomFilter *node_filter;
  GtkCustomFilter *swing_filter;
  GtkTreeListModel *tree;
  GtkSingleSelection *selection;
  GtkStringList *clubs;           /* "Any club", then the library's clubs */
  ArcwiseSwingItem *selected;
  ArcwiseUnits units;
  guint n_matching;
  gboolean filtering;             /* some filter is set */
  gboolean updating;
  gboolean readonly;
  gboolean reloading;             /* the rows are being replaced: nothing is closed by the user */
  GHashTable *open_players;       /* gint64 ids of the players and sessions the coach has open, */
  GHashTable *open_sessions;      /* kept while a filter hides them */
};

enum { SIGNAL_SWING_SELECTED, SIGNAL_PLAYER_SAVED, N_SIGNALS };
static guint signals[N_SIGNALS];

G_DEFINE_FINAL_TYPE(ArcwiseLibraryBrowser, arcwise_library_browser, GTK_TYPE_WIDGET)

static void refilter(ArcwiseLibraryBrowser *self);
static void remember_open(ArcwiseLibraryBrowser *self);
static void reopen(ArcwiseLibraryBrowser *self);

/* ---- filters ---------------------------------------------------------------------------- */

static gboolean
node_visible(gpointer item, gpointer data)
{
  ArcwiseLibraryBrowser *self = data;
  ArcwiseLibraryNode *n = ARCWISE_LIBRARY_NODE(item);
  /* A player with no swings yet (just added, nothing imported) has nothing a filter could
   * pass: shown with no filter, or when the search names them. */
  return !self->filtering || n->n_match > 0 || (n->n_total == 0 && n->name_match);
}

static gboolean
swing_visible(gpointer item, gpointer data)
{
  return ARCWISE_SWING_ITEM(item)->match;
}

typedef struct {
  char *needle;          /* casefolded, NULL for none */
  const char *club;      /* NULL for any */
  guint rating, kind, data;
  gboolean reference, tagged;
} FilterState;

static gboolean
swing_passes(ArcwiseSwingItem *it, const FilterState *f)
{
  if (f->club != NULL && g_strcmp0(f->club, it->club) != 0)
    return FALSE;
  switch (f->rating) {
  case RATING_UNRATED: if (it->rating > 0) return FALSE; break;
  case RATING_3: if (it->rating < 3) return FALSE; break;
  case RATING_4: if (it->rating < 4) return FALSE; break;
  case RATING_5: if (it->rating < 5) return FALSE; break;
  default: break;
  }
  if (f->kind == KIND_STRUCK && it->practice != 0)
    return FALSE;
  if (f->kind == KIND_PRACTICE && it->practice != 1)
    return FALSE;
  if (f->data == DATA_GAPS && !arcwise_swing_item_has_camera_gaps(it))
    return FALSE;
  if (f->data == DATA_NOTES && !arcwise_swing_item_has_quality_notes(it))
    return FALSE;
  if (f->data == DATA_CLEAN && it->quality_notes != 0)
    return FALSE;
  if (f->reference && !it->reference)
    return FALSE;
  if (f->tagged && !arcwise_swing_item_is_tagged(it))
    return FALSE;
  return arcwise_swing_item_matches(it, f->needle);
}

static void
read_filters(ArcwiseLibraryBrowser *self, FilterState *f)
{
  const char *text = gtk_editable_get_text(GTK_EDITABLE(self->search_entry));
  g_autofree char *stripped = g_strstrip(g_strdup(text));
  f->needle = *stripped ? g_utf8_casefold(stripped, -1) : NULL;
  guint c = gtk_drop_down_get_selected(self->club_dropdown);
  f->club = c != GTK_INVALID_LIST_POSITION && c > 0 && self->clubs != NULL &&
                    c < g_list_model_get_n_items(G_LIST_MODEL(self->clubs))
                ? gtk_string_list_get_string(self->clubs, c) : NULL;
  f->rating = gtk_drop_down_get_selected(self->rating_dropdown);
  f->kind = gtk_drop_down_get_selected(self->kind_dropdown);
  f->data = gtk_drop_down_get_selected(self->data_dropdown);
  if (f->rating == GTK_INVALID_LIST_POSITION) f->rating = RATING_ANY;
  if (f->kind == GTK_INVALID_LIST_POSITION) f->kind = KIND_ANY;
  if (f->data == GTK_INVALID_LIST_POSITION) f->data = DATA_ANY;
  f->reference = gtk_toggle_button_get_active(self->reference_toggle);
  f->tagged = gtk_toggle_button_get_active(self->tagged_toggle);
}

/* Marks every swing, counts per node, then lets the tree's filters re-run. */
static void
refilter(ArcwiseLibraryBrowser *self)
{
  FilterState f;
  read_filters(self, &f);
  self->filtering = f.needle != NULL || f.club != NULL || f.rating != RATING_ANY ||
                    f.kind != KIND_ANY || f.data != DATA_ANY || f.reference || f.tagged;
  guint total = 0, shown = 0;
  guint np = g_list_model_get_n_items(G_LIST_MODEL(self->players));
  for (guint i = 0; i < np; i++) {
    ArcwiseLibraryNode *p = g_list_model_get_item(G_LIST_MODEL(self->players), i);
    guint pm = 0;
    guint ns = g_list_model_get_n_items(G_LIST_MODEL(p->children));
    for (guint j = 0; j < ns; j++) {
      ArcwiseLibraryNode *s = g_list_model_get_item(G_LIST_MODEL(p->children), j);
      guint sm = 0;
      guint nw = g_list_model_get_n_items(G_LIST_MODEL(s->children));
      for (guint k = 0; k < nw; k++) {
        ArcwiseSwingItem *it = g_list_model_get_item(G_LIST_MODEL(s->children), k);
        it->match = !self->filtering || swing_passes(it, &f);
        sm += it->match;
        g_object_unref(it);
      }
      total += nw;
      node_set_match(s, sm);
      pm += sm;
      g_object_unref(s);
    }
    node_set_match(p, pm);
    if (p->n_total == 0) {
      g_autofree char *name = g_utf8_casefold(p->name, -1);
      p->name_match = f.needle != NULL && strstr(name, f.needle) != NULL;
    }
    shown += pm;
    g_object_unref(p);
  }
  g_free(f.needle);
  self->n_matching = shown;
  /* A filter model reports a changed span, so rows inside it that stay are made again and
   * would come back closed: note what is open first and open it again after. */
  if (!self->reloading)
    remember_open(self);
  gtk_filter_changed(GTK_FILTER(self->node_filter), GTK_FILTER_CHANGE_DIFFERENT);
  gtk_filter_changed(GTK_FILTER(self->swing_filter), GTK_FILTER_CHANGE_DIFFERENT);
  reopen(self);
  g_autofree char *txt = self->filtering
      ? g_strdup_printf("%u of %u swings match", shown, total)
      : g_strdup_printf("%u swing%s, %u player%s", total, total == 1 ? "" : "s", np,
                        np == 1 ? "" : "s");
  gtk_label_set_text(self->count_label, txt);
  gtk_widget_set_sensitive(GTK_WIDGET(self->clear_button), self->filtering);
}

static void
on_filter_changed(ArcwiseLibraryBrowser *self)
{
  if (!self->updating)
    refilter(self);
}

static void
on_dropdown_notify(GObject *o, GParamSpec *p, ArcwiseLibraryBrowser *self)
{
  on_filter_changed(self);
}

static void
on_clear(ArcwiseLibraryBrowser *self)
{
  self->updating = TRUE;
  gtk_editable_set_text(GTK_EDITABLE(self->search_entry), "");
  gtk_drop_down_set_selected(self->club_dropdown, 0);
  gtk_drop_down_set_selected(self->rating_dropdown, 0);
  gtk_drop_down_set_selected(self->kind_dropdown, 0);
  gtk_drop_down_set_selected(self->data_dropdown, 0);
  gtk_toggle_button_set_active(self->reference_toggle, FALSE);
  gtk_toggle_button_set_active(self->tagged_toggle, FALSE);
  self->updating = FALSE;
  refilter(self);
}

/* ---- rows ------------------------------------------------------------------------------- */

static GListModel *
create_children(gpointer item, gpointer data)
{
  ArcwiseLibraryBrowser *self = data;
  if (!ARCWISE_IS_LIBRARY_NODE(item))
    return NULL;
  ArcwiseLibraryNode *n = item;
  GtkCustomFilter *f = n->kind == NODE_PLAYER ? self->node_filter : self->swing_filter;
  return G_LIST_MODEL(gtk_filter_list_model_new(G_LIST_MODEL(g_object_ref(n->children)),
                                                GTK_FILTER(g_object_ref(f))));
}

/* Row widgets: expander > box[mark, box[title, detail], count, edit button]. */
typedef struct {
  GtkWidget *expander, *mark, *title, *detail, *count, *edit;
} RowParts;

static void
row_setup(GtkSignalListItemFactory *f, GtkListItem *li, ArcwiseLibraryBrowser *self)
{
  RowParts *r = g_new0(RowParts, 1);
  r->expander = gtk_tree_expander_new();
  gtk_tree_expander_set_indent_for_icon(GTK_TREE_EXPANDER(r->expander), TRUE);
  GtkWidget *box = gtk_box_new(GTK_ORIENTATION_HORIZONTAL, 8);
  gtk_widget_add_css_class(box, "tree-row");
  r->mark = gtk_label_new(NULL);
  gtk_widget_add_css_class(r->mark, "row-mark");
  gtk_widget_set_valign(r->mark, GTK_ALIGN_CENTER);
  GtkWidget *texts = gtk_box_new(GTK_ORIENTATION_VERTICAL, 1);
  gtk_widget_set_hexpand(texts, TRUE);
  r->title = gtk_label_new(NULL);
  r->detail = gtk_label_new(NULL);
  gtk_label_set_xalign(GTK_LABEL(r->title), 0);
  gtk_label_set_xalign(GTK_LABEL(r->detail), 0);
  gtk_label_set_ellipsize(GTK_LABEL(r->title), PANGO_ELLIPSIZE_END);
  /* The key numbers wrap rather than lose the end of the line in a narrow column. */
  gtk_label_set_wrap(GTK_LABEL(r->detail), TRUE);
  gtk_label_set_wrap_mode(GTK_LABEL(r->detail), PANGO_WRAP_WORD_CHAR);
  gtk_widget_add_css_class(r->title, "row-title");
  gtk_widget_add_css_class(r->detail, "row-detail");
  gtk_box_append(GTK_BOX(texts), r->title);
  gtk_box_append(GTK_BOX(texts), r->detail);
  r->count = gtk_label_new(NULL);
  gtk_widget_add_css_class(r->count, "row-count");
  gtk_widget_set_valign(r->count, GTK_ALIGN_CENTER);
  r->edit = gtk_button_new_from_icon_name("document-edit-symbolic");
  gtk_widget_add_css_class(r->edit, "flat");
  gtk_widget_set_valign(r->edit, GTK_ALIGN_CENTER);
  gtk_widget_set_tooltip_text(r->edit, "Edit this player: name, hand, lead wrist, height, clubs");
  gtk_widget_set_focus_on_click(r->edit, FALSE);
  gtk_box_append(GTK_BOX(box), r->mark);
  gtk_box_append(GTK_BOX(box), texts);
  gtk_box_append(GTK_BOX(box), r->count);
  gtk_box_append(GTK_BOX(box), r->edit);
  gtk_tree_expander_set_child(GTK_TREE_EXPANDER(r->expander), box);
  gtk_list_item_set_child(li, r->expander);
  g_object_set_data_full(G_OBJECT(li), "parts", r, g_free);
}

static void
show_node_counts(ArcwiseLibraryBrowser *self, ArcwiseLibraryNode *n, RowParts *r)
{
  g_autofree char *c = self->filtering && n->n_match != n->n_total
                           ? g_strdup_printf("%u / %u", n->n_match, n->n_total)
                           : g_strdup_printf("%u", n->n_total);
  gtk_label_set_text(GTK_LABEL(r->count), c);
  const char *hand = n->handed < 0 ? "left-handed" : "right-handed";
  g_autofree char *d = n->kind == NODE_PLAYER
      ? g_strdup_printf("%s · %u session%s · %u swing%s", hand, n->n_sessions,
                        n->n_sessions == 1 ? "" : "s", n->n_total, n->n_total == 1 ? "" : "s")
      : g_strdup_printf("%s%s%u swing%s", n->place, *n->place ? " · " : "", n->n_total,
                        n->n_total == 1 ? "" : "s");
  gtk_label_set_text(GTK_LABEL(r->detail), d);
}

static void
on_node_counts(ArcwiseLibraryNode *n, GParamSpec *p, GtkListItem *li)
{
  ArcwiseLibraryBrowser *self = g_object_get_data(G_OBJECT(li), "browser");
  RowParts *r = g_object_get_data(G_OBJECT(li), "parts");
  if (self != NULL && r != NULL)
    show_node_counts(self, n, r);
}

/* "2026-11-03" -> "Tue 3 Nov 2026" (a time after the date is kept as it is). */
static char *
session_title(const char *iso)
{
  int y, m, d;
  if (iso == NULL || sscanf(iso, "%4d-%2d-%2d", &y, &m, &d) != 3 || !g_date_valid_dmy(d, m, y))
    return g_strdup(iso ? iso : "");
  GDate date;
  g_date_clear(&date, 1);
  g_date_set_dmy(&date, (GDateDay)d, (GDateMonth)m, (GDateYear)y);
  char buf[64];
  if (g_date_strftime(buf, sizeof buf, "%a %e %b %Y", &date) == 0)
    return g_strdup(iso);
  const char *rest = strlen(iso) > 10 ? iso + 10 : "";
  if (*rest == 'T')
    rest++;
  return g_strdup_printf("%s%s%s", g_strstrip(buf), *rest ? ", " : "", rest);
}

static void
show_swing(ArcwiseLibraryBrowser *self, ArcwiseSwingItem *it, RowParts *r)
{
  g_autofree char *t = g_strdup_printf("%s%s", it->reference ? "◆ " : "", it->title);
  gtk_label_set_text(GTK_LABEL(r->title), t);
  GString *s = g_string_new(NULL);
  if (it->practice == 1)
    g_string_append(s, "practice · ");
  if (isfinite(it->tempo))
    g_string_append_printf(s, "tempo %.1f:1 · ", it->tempo);
  gboolean at_impact = isfinite(it->impact_hand_speed_m_s);
  double v = at_impact ? it->impact_hand_speed_m_s : it->peak_hand_speed_m_s;
  ArcwiseFigure sp = { "", v, ARCWISE_FIGURE_SPEED };
  g_autofree char *speed = arcwise_figure_format(&sp, self->units, FALSE);
  g_string_append_printf(s, "hands %s", speed);
  gtk_label_set_text(GTK_LABEL(r->detail), s->str);
  gtk_widget_set_tooltip_text(r->detail, at_impact
      ? "Tempo (backswing : downswing) and hand speed at impact"
      : "Tempo (backswing : downswing) and peak hand speed (no impact found)");
  g_string_free(s, TRUE);
  /* Rating as filled and empty stars on the right. */
  GString *stars = g_string_new(NULL);
  for (int i = 0; i < 5 && it->rating > 0; i++)
    g_string_append(stars, i < it->rating ? "★" : "☆");
  gtk_label_set_text(GTK_LABEL(r->count), stars->str);
  g_string_free(stars, TRUE);
  /* The data-quality mark: a filled dot, in a colour for what the analysis noted. */
  const char *cls = "q-clean", *glyph = "●";
  GString *tip = g_string_new(NULL);
  if (it->quality_notes < 0 && !isfinite(it->camera_gap_share)) {
    cls = "q-unknown";
    glyph = "○";
    g_string_append(tip, "Not analysed yet: no data-quality notes.");
  } else {
    if (arcwise_swing_item_has_camera_gaps(it)) {
      cls = "q-gap";
      glyph = "◐";
    } else if (arcwise_swing_item_has_quality_notes(it))
      cls = "q-note";
    if (it->quality_notes > 0) {
      for (unsigned b = 0; b < AW_NOTE_NOTE_COUNT_; b++)
        if (it->quality_notes & (1 << b)) {
          const char *txt = aw_quality_note_text(1u << b);
          if (txt != NULL)
            g_string_append_printf(tip, "%s%s", tip->len ? "\n" : "", txt);
        }
    } else if (isfinite(it->camera_gap_share) && it->camera_gap_share > 0)
      g_string_append_printf(tip, "The camera lost the hands for %.0f %% of the swing.",
                             100 * it->camera_gap_share);
    if (tip->len == 0)
      g_string_append(tip, "No data-quality notes.");
  }
  gtk_label_set_text(GTK_LABEL(r->mark), glyph);
  static const char *const all[] = { "q-clean", "q-gap", "q-note", "q-unknown" };
  for (guint i = 0; i < G_N_ELEMENTS(all); i++)
    gtk_widget_remove_css_class(r->mark, all[i]);
  gtk_widget_add_css_class(r->mark, cls);
  gtk_widget_set_tooltip_text(r->mark, tip->str);
  g_string_free(tip, TRUE);
}

static void
on_swing_changed(ArcwiseSwingItem *it, GtkListItem *li)
{
  ArcwiseLibraryBrowser *self = g_object_get_data(G_OBJECT(li), "browser");
  RowParts *r = g_object_get_data(G_OBJECT(li), "parts");
  if (self != NULL && r != NULL)
    show_swing(self, it, r);
}

static void on_edit_clicked(GtkButton *b, ArcwiseLibraryBrowser *self);
void arcwise_library_browser_edit_player(ArcwiseLibraryBrowser *self, gint64 id);

static void
row_bind(GtkSignalListItemFactory *f, GtkListItem *li, ArcwiseLibraryBrowser *self)
{
  RowParts *r = g_object_get_data(G_OBJECT(li), "parts");
  GtkTreeListRow *row = gtk_list_item_get_item(li);
  gtk_tree_expander_set_list_row(GTK_TREE_EXPANDER(r->expander), row);
  gpointer item = gtk_tree_list_row_get_item(row);   /* a new reference */
  GtkWidget *box = gtk_tree_expander_get_child(GTK_TREE_EXPANDER(r->expander));
  static const char *const kinds[] = { "player-row", "session-row", "swing-row" };
  for (guint i = 0; i < G_N_ELEMENTS(kinds); i++)
    gtk_widget_remove_css_class(box, kinds[i]);
  g_object_set_data(G_OBJECT(li), "browser", self);
  gulong handler = 0;
  if (ARCWISE_IS_LIBRARY_NODE(item)) {
    ArcwiseLibraryNode *n = item;
    gtk_widget_add_css_class(box, n->kind == NODE_PLAYER ? "player-row" : "session-row");
    gtk_widget_set_tooltip_text(r->detail, NULL);
    g_autofree char *title = n->kind == NODE_PLAYER ? g_strdup(n->name) : session_title(n->name);
    gtk_label_set_text(GTK_LABEL(r->title), title);
    gtk_label_set_text(GTK_LABEL(r->mark), "");
    gtk_widget_set_visible(r->mark, FALSE);
    gtk_widget_set_visible(r->edit, n->kind == NODE_PLAYER);
    gtk_widget_set_sensitive(r->edit, !self->readonly);
    g_object_set_data(G_OBJECT(r->edit), "player-id", GSIZE_TO_POINTER((gsize)n->id));
    if (g_object_get_data(G_OBJECT(r->edit), "connected") == NULL) {
      g_signal_connect(r->edit, "clicked", G_CALLBACK(on_edit_clicked), self);
      g_object_set_data(G_OBJECT(r->edit), "connected", GINT_TO_POINTER(1));
    }
    show_node_counts(self, n, r);
    handler = g_signal_connect(n, "notify::n-match", G_CALLBACK(on_node_counts), li);
  } else {
    ArcwiseSwingItem *it = item;
    gtk_widget_set_tooltip_text(r->detail, NULL);
    gtk_widget_add_css_class(box, "swing-row");
    gtk_widget_set_visible(r->mark, TRUE);
    gtk_widget_set_visible(r->edit, FALSE);
    show_swing(self, it, r);
    handler = g_signal_connect(it, "changed", G_CALLBACK(on_swing_changed), li);
  }
  /* Our own reference: a reload can drop the model's before the row is unbound. */
  g_object_set_data_full(G_OBJECT(li), "watched", item, g_object_unref);
  g_object_set_data(G_OBJECT(li), "handler", GSIZE_TO_POINTER((gsize)handler));
}

static void
row_unbind(GtkSignalListItemFactory *f, GtkListItem *li, ArcwiseLibraryBrowser *self)
{
  gpointer item = g_object_get_data(G_OBJECT(li), "watched");
  gulong handler = (gulong)GPOINTER_TO_SIZE(g_object_get_data(G_OBJECT(li), "handler"));
  if (item != NULL && handler != 0)
    g_signal_handler_disconnect(item, handler);
  g_object_set_data(G_OBJECT(li), "watched", NULL);
  g_object_set_data(G_OBJECT(li), "handler", NULL);
}

static void
player_saved(gpointer data)
{
  ArcwiseLibraryBrowser *self = data;
  g_signal_emit(self, signals[SIGNAL_PLAYER_SAVED], 0);
}

static void
on_edit_clicked(GtkButton *b, ArcwiseLibraryBrowser *self)
{
  arcwise_library_browser_edit_player(
      self, (gint64)GPOINTER_TO_SIZE(g_object_get_data(G_OBJECT(b), "player-id")));
}

void
arcwise_library_browser_edit_player(ArcwiseLibraryBrowser *self, gint64 id)
{
  if (self->source == NULL || id <= 0 || self->readonly)
    return;
  GtkRoot *root = gtk_widget_get_root(GTK_WIDGET(self));
  /* The editor is transient for our window and calls back once, after a save. */
  arcwise_player_editor_present(GTK_IS_WINDOW(root) ? GTK_WINDOW(root) : NULL, self->source, id,
                                G_CALLBACK(player_saved), self);
}

static void
set_factory(ArcwiseLibraryBrowser *self)
{
  GtkListItemFactory *factory = gtk_signal_list_item_factory_new();
  g_signal_connect(factory, "setup", G_CALLBACK(row_setup), self);
  g_signal_connect(factory, "bind", G_CALLBACK(row_bind), self);
  g_signal_connect(factory, "unbind", G_CALLBACK(row_unbind), self);
  gtk_list_view_set_factory(self->tree_view, factory);
  g_object_unref(factory);
}

/* ---- walking the tree ------------------------------------------------------------------- */

static gpointer
row_item(ArcwiseLibraryBrowser *self, guint pos, GtkTreeListRow **row_out)
{
  GtkTreeListRow *row = gtk_tree_list_model_get_row(self->tree, pos);
  if (row == NULL)
    return NULL;
  gpointer item = gtk_tree_list_row_get_item(row);
  if (row_out)
    *row_out = row;
  else
    g_object_unref(row);
  if (item != NULL)
    g_object_unref(item);   /* the model keeps it */
  return item;
}

/* Position of `target` among the rows from `from`, not past the end of the subtree at `depth`
 * (a row at a smaller depth ends the search); G_MAXUINT when absent. */
static guint
find_row(ArcwiseLibraryBrowser *self, guint from, guint depth, gpointer target)
{
  guint n = g_list_model_get_n_items(G_LIST_MODEL(self->tree));
  for (guint i = from; i < n; i++) {
    GtkTreeListRow *row = NULL;
    gpointer item = row_item(self, i, &row);
    guint d = gtk_tree_list_row_get_depth(row);
    g_object_unref(row);
    if (d < depth)
      break;
    if (d == depth && item == target)
      return i;
  }
  return G_MAXUINT;
}

static void
expand_at(ArcwiseLibraryBrowser *self, guint pos, gboolean on)
{
  GtkTreeListRow *row = gtk_tree_list_model_get_row(self->tree, pos);
  if (row != NULL) {
    gtk_tree_list_row_set_expanded(row, on);
    g_object_unref(row);
  }
}

static ArcwiseLibraryNode *
player_of(ArcwiseLibraryBrowser *self, gint64 player_id)
{
  guint np = g_list_model_get_n_items(G_LIST_MODEL(self->players));
  for (guint i = 0; i < np; i++) {
    ArcwiseLibraryNode *p = g_list_model_get_item(G_LIST_MODEL(self->players), i);
    g_object_unref(p);
    if (p->id == player_id)
      return p;
  }
  return NULL;
}

static ArcwiseLibraryNode *
session_of(ArcwiseLibraryBrowser *self, gint64 session_id)
{
  for (guint i = 0; i < self->sessions->len; i++) {
    ArcwiseLibraryNode *s = g_ptr_array_index(self->sessions, i);
    if (s->id == session_id)
      return s;
  }
  return NULL;
}

static void
select_position(ArcwiseLibraryBrowser *self, guint pos)
{
  gtk_single_selection_set_selected(self->selection, pos);
  gtk_widget_activate_action(GTK_WIDGET(self->tree_view), "list.scroll-to-item", "u", pos);
}

gboolean
arcwise_library_browser_select_swing(ArcwiseLibraryBrowser *self, ArcwiseSwingItem *it)
{
  if (it == NULL || !it->match)
    return FALSE;
  ArcwiseLibraryNode *p = player_of(self, it->player_id);
  ArcwiseLibraryNode *s = session_of(self, it->session_id);
  if (p == NULL || s == NULL)
    return FALSE;
  guint pp = find_row(self, 0, 0, p);
  if (pp == G_MAXUINT)
    return FALSE;
  expand_at(self, pp, TRUE);
  guint sp = find_row(self, pp + 1, 1, s);
  if (sp == G_MAXUINT)
    return FALSE;
  expand_at(self, sp, TRUE);
  guint wp = find_row(self, sp + 1, 2, it);
  if (wp == G_MAXUINT)
    return FALSE;
  select_position(self, wp);
  return TRUE;
}

static ArcwiseSwingItem *
nth_match(ArcwiseLibraryBrowser *self, guint n, guint *index_of, ArcwiseSwingItem *find)
{
  guint total = g_list_model_get_n_items(G_LIST_MODEL(self->swings)), k = 0;
  for (guint i = 0; i < total; i++) {
    ArcwiseSwingItem *it = g_list_model_get_item(G_LIST_MODEL(self->swings), i);
    g_object_unref(it);
    if (!it->match)
      continue;
    if (find != NULL && it == find) {
      *index_of = k;
      return it;
    }
    if (find == NULL && k == n)
      return it;
    k++;
  }
  return NULL;
}

gboolean
arcwise_library_browser_select_nth(ArcwiseLibraryBrowser *self, guint n)
{
  return arcwise_library_browser_select_swing(self, nth_match(self, n, NULL, NULL));
}

void
arcwise_library_browser_step(ArcwiseLibraryBrowser *self, int d)
{
  if (self->n_matching == 0)
    return;
  guint at = 0;
  if (self->selected == NULL || nth_match(self, 0, &at, self->selected) == NULL) {
    arcwise_library_browser_select_nth(self, 0);
    return;
  }
  int next = CLAMP((int)at + d, 0, (int)self->n_matching - 1);
  arcwise_library_browser_select_nth(self, (guint)next);
}

guint
arcwise_library_browser_get_n_matching(ArcwiseLibraryBrowser *self)
{
  return self->n_matching;
}

/* ---- selection and keys ----------------------------------------------------------------- */

static void
on_selection_changed(GtkSingleSelection *sel, guint pos, guint n, ArcwiseLibraryBrowser *self)
{
  GtkTreeListRow *row = gtk_single_selection_get_selected_item(sel);
  if (row == NULL)
    return;   /* the filters hid the row: the stage keeps its swing */
  gpointer item = gtk_tree_list_row_get_item(row);
  if (ARCWISE_IS_SWING_ITEM(item) && item != (gpointer)self->selected) {
    g_set_object(&self->selected, item);
    g_signal_emit(self, signals[SIGNAL_SWING_SELECTED], 0, item);
  }
  g_clear_object(&item);
}

/* Enter (or a double click) on a player or session opens or closes it. */
static void
on_activate(GtkListView *view, guint pos, ArcwiseLibraryBrowser *self)
{
  GtkTreeListRow *row = gtk_tree_list_model_get_row(self->tree, pos);
  if (row == NULL)
    return;
  if (gtk_tree_list_row_is_expandable(row))
    gtk_tree_list_row_set_expanded(row, !gtk_tree_list_row_get_expanded(row));
  g_object_unref(row);
}

/* Right opens a row (or steps into it), Left closes it (or steps out to its parent); plus and
 * minus open and close. The expander's own keys only work when it has the focus, which the
 * list's rows keep. */
static gboolean
on_key(GtkEventControllerKey *c, guint key, guint code, GdkModifierType mods,
       ArcwiseLibraryBrowser *self)
{
  if (mods & (GDK_CONTROL_MASK | GDK_ALT_MASK))
    return FALSE;
  guint pos = gtk_single_selection_get_selected(self->selection);
  if (pos == GTK_INVALID_LIST_POSITION)
    return FALSE;
  GtkTreeListRow *row = gtk_tree_list_model_get_row(self->tree, pos);
  if (row == NULL)
    return FALSE;
  gboolean done = TRUE;
  gboolean expandable = gtk_tree_list_row_is_expandable(row);
  gboolean expanded = gtk_tree_list_row_get_expanded(row);
  switch (key) {
  case GDK_KEY_Right:
  case GDK_KEY_KP_Right:
    if (expandable && !expanded)
      gtk_tree_list_row_set_expanded(row, TRUE);
    else if (expanded)
      select_position(self, pos + 1);
    break;
  case GDK_KEY_Left:
  case GDK_KEY_KP_Left:
    if (expanded)
      gtk_tree_list_row_set_expanded(row, FALSE);
    else {
      GtkTreeListRow *parent = gtk_tree_list_row_get_parent(row);
      if (parent != NULL) {
        select_position(self, gtk_tree_list_row_get_position(parent));
        g_object_unref(parent);
      }
    }
    break;
  case GDK_KEY_plus:
  case GDK_KEY_KP_Add:
    gtk_tree_list_row_set_expanded(row, TRUE);
    break;
  case GDK_KEY_minus:
  case GDK_KEY_KP_Subtract:
    gtk_tree_list_row_set_expanded(row, FALSE);
    break;
  default:
    done = FALSE;
  }
  g_object_unref(row);
  if (done) {
    /* Keep the keyboard on the (possibly new) selected row. */
    guint now = gtk_single_selection_get_selected(self->selection);
    if (now != GTK_INVALID_LIST_POSITION)
      gtk_widget_activate_action(GTK_WIDGET(self->tree_view), "list.select-item", "(ubb)", now,
                                 FALSE, FALSE);
  }
  return done;
}

/* Down from the search entry moves into the tree. */
static gboolean
on_search_key(GtkEventControllerKey *c, guint key, guint code, GdkModifierType mods,
              ArcwiseLibraryBrowser *self)
{
  if (key != GDK_KEY_Down && key != GDK_KEY_KP_Down)
    return FALSE;
  guint pos = gtk_single_selection_get_selected(self->selection);
  if (g_list_model_get_n_items(G_LIST_MODEL(self->tree)) == 0)
    return FALSE;
  gtk_widget_activate_action(GTK_WIDGET(self->tree_view), "list.select-item", "(ubb)",
                             pos == GTK_INVALID_LIST_POSITION ? 0u : pos, FALSE, FALSE);
  return TRUE;
}

/* ---- loading ---------------------------------------------------------------------------- */

static int
cmp_player(gconstpointer a, gconstpointer b)
{
  const ArcwiseLibraryNode *x = *(ArcwiseLibraryNode *const *)a, *y = *(ArcwiseLibraryNode *const *)b;
  int c = g_utf8_collate(x->name, y->name);
  return c != 0 ? c : (x->id > y->id) - (x->id < y->id);
}

/* Notes which of the rows shown are open, by id; players and sessions not shown keep what
 * was noted when they were last shown. */
static void
remember_open(ArcwiseLibraryBrowser *self)
{
  if (self->tree == NULL)
    return;
  guint n = g_list_model_get_n_items(G_LIST_MODEL(self->tree));
  for (guint i = 0; i < n; i++) {
    GtkTreeListRow *row = NULL;
    gpointer item = row_item(self, i, &row);
    if (ARCWISE_IS_LIBRARY_NODE(item)) {
      ArcwiseLibraryNode *node = item;
      GHashTable *set = node->kind == NODE_PLAYER ? self->open_players : self->open_sessions;
      if (gtk_tree_list_row_get_expanded(row)) {
        gint64 *id = g_new(gint64, 1);
        *id = node->id;
        g_hash_table_add(set, id);
      } else
        g_hash_table_remove(set, &node->id);
    }
    g_object_unref(row);
  }
}

static void
reopen(ArcwiseLibraryBrowser *self)
{
  for (guint i = 0; i < g_list_model_get_n_items(G_LIST_MODEL(self->tree)); i++) {
    GtkTreeListRow *row = NULL;
    gpointer item = row_item(self, i, &row);
    if (ARCWISE_IS_LIBRARY_NODE(item)) {
      ArcwiseLibraryNode *node = item;
      GHashTable *set = node->kind == NODE_PLAYER ? self->open_players : self->open_sessions;
      if (!gtk_tree_list_row_get_expanded(row) && g_hash_table_contains(set, &node->id))
        gtk_tree_list_row_set_expanded(row, TRUE);
    }
    g_object_unref(row);
  }
}

static int
cmp_club(gconstpointer a, gconstpointer b)
{
  return g_utf8_collate(*(char *const *)a, *(char *const *)b);
}

static void
rebuild_clubs(ArcwiseLibraryBrowser *self, GPtrArray *items)
{
  const char *was = NULL;
  guint c = gtk_drop_down_get_selected(self->club_dropdown);
  if (self->clubs != NULL && c != GTK_INVALID_LIST_POSITION && c > 0)
    was = gtk_string_list_get_string(self->clubs, c);
  g_autofree char *keep = g_strdup(was);
  GHashTable *seen = g_hash_table_new(g_str_hash, g_str_equal);
  GPtrArray *names = g_ptr_array_new();
  for (guint i = 0; i < items->len; i++) {
    ArcwiseSwingItem *it = g_ptr_array_index(items, i);
    if (it->club != NULL && *it->club && !g_hash_table_contains(seen, it->club)) {
      g_hash_table_add(seen, it->club);
      g_ptr_array_add(names, it->club);
    }
  }
  g_ptr_array_sort(names, cmp_club);
  g_ptr_array_insert(names, 0, (char *)"Any club");
  g_ptr_array_add(names, NULL);
  g_clear_object(&self->clubs);
  self->clubs = gtk_string_list_new((const char *const *)names->pdata);
  gtk_drop_down_set_model(self->club_dropdown, G_LIST_MODEL(self->clubs));
  guint sel = 0;
  for (guint i = 1; keep != NULL && i + 1 < names->len; i++)
    if (g_strcmp0(keep, g_ptr_array_index(names, i)) == 0)
      sel = i;
  gtk_drop_down_set_selected(self->club_dropdown, sel);
  g_ptr_array_unref(names);
  g_hash_table_unref(seen);
}

gboolean
arcwise_library_browser_reload(ArcwiseLibraryBrowser *self, GError **error)
{
  gint64 keep = self->selected ? self->selected->swing_id : 0;
  remember_open(self);

  g_autoptr(GError) e = NULL;
  GPtrArray *items = self->source ? arcwise_library_source_list(self->source, &e) : NULL;
  if (items == NULL) {
    items = g_ptr_array_new_with_free_func(g_object_unref);
    if (e != NULL)
      gtk_label_set_text(self->status_label, e->message);
    gtk_widget_set_visible(GTK_WIDGET(self->status_label), e != NULL);
  } else
    gtk_widget_set_visible(GTK_WIDGET(self->status_label), FALSE);

  /* Group: players, their sessions in list order (the store lists newest first), swings. */
  GHashTable *pmap = g_hash_table_new(g_int64_hash, g_int64_equal);
  GHashTable *smap = g_hash_table_new(g_int64_hash, g_int64_equal);
  GPtrArray *players = g_ptr_array_new_with_free_func(g_object_unref);
  GPtrArray *sessions = g_ptr_array_new_with_free_func(g_object_unref);
  GPtrArray *session_swings = g_ptr_array_new_with_free_func((GDestroyNotify)g_ptr_array_unref);
  GPtrArray *player_sessions = g_ptr_array_new_with_free_func((GDestroyNotify)g_ptr_array_unref);
  for (guint i = 0; i < items->len; i++) {
    ArcwiseSwingItem *it = g_ptr_array_index(items, i);
    it->match = TRUE;
    ArcwiseLibraryNode *p = g_hash_table_lookup(pmap, &it->player_id);
    if (p == NULL) {
      p = node_new(NODE_PLAYER, it->player_id, it->player, NULL);
      p->handed = it->handed;
      g_object_set_data(G_OBJECT(p), "index", GUINT_TO_POINTER(player_sessions->len));
      g_ptr_array_add(players, p);
      g_ptr_array_add(player_sessions, g_ptr_array_new());
      g_hash_table_insert(pmap, &p->id, p);
    }
    ArcwiseLibraryNode *s = g_hash_table_lookup(smap, &it->session_id);
    if (s == NULL) {
      s = node_new(NODE_SESSION, it->session_id, it->session_date ? it->session_date : it->session,
                   it->session_place);
      s->player_id = it->player_id;
      g_object_set_data(G_OBJECT(s), "index", GUINT_TO_POINTER(session_swings->len));
      g_ptr_array_add(sessions, s);
      g_ptr_array_add(session_swings, g_ptr_array_new());
      g_hash_table_insert(smap, &s->id, s);
      guint pi = GPOINTER_TO_UINT(g_object_get_data(G_OBJECT(p), "index"));
      g_ptr_array_add(g_ptr_array_index(player_sessions, pi), s);
      p->n_sessions++;
    }
    guint si = GPOINTER_TO_UINT(g_object_get_data(G_OBJECT(s), "index"));
    g_ptr_array_add(g_ptr_array_index(session_swings, si), it);
    s->n_total++;
    s->n_match++;
    p->n_total++;
    p->n_match++;
  }
  /* Players with no swings yet still have a row, with 0 counts, to edit or import into. */
  g_autoptr(GPtrArray) all = self->source ? arcwise_library_source_list_players(self->source, NULL)
                                          : NULL;
  for (guint i = 0; all != NULL && i < all->len; i++) {
    ArcwisePlayerRecord *r = g_ptr_array_index(all, i);
    if (g_hash_table_lookup(pmap, &r->id) != NULL)
      continue;
    ArcwiseLibraryNode *p = node_new(NODE_PLAYER, r->id, r->name, NULL);
    p->handed = r->handed < 0 ? -1 : 1;
    g_object_set_data(G_OBJECT(p), "index", GUINT_TO_POINTER(player_sessions->len));
    g_ptr_array_add(players, p);
    g_ptr_array_add(player_sessions, g_ptr_array_new());
    g_hash_table_insert(pmap, &p->id, p);
  }
  for (guint i = 0; i < sessions->len; i++) {
    ArcwiseLibraryNode *s = g_ptr_array_index(sessions, i);
    GPtrArray *w = g_ptr_array_index(session_swings, i);
    g_list_store_splice(s->children, 0, 0, w->pdata, w->len);
  }
  for (guint i = 0; i < players->len; i++) {
    ArcwiseLibraryNode *p = g_ptr_array_index(players, i);
    GPtrArray *ss = g_ptr_array_index(player_sessions, i);
    g_list_store_splice(p->children, 0, 0, ss->pdata, ss->len);
  }
  g_ptr_array_sort(players, cmp_player);

  /* The flat list in tree order. */
  GPtrArray *flat = g_ptr_array_new();
  for (guint i = 0; i < players->len; i++) {
    ArcwiseLibraryNode *p = g_ptr_array_index(players, i);
    guint pi = GPOINTER_TO_UINT(g_object_get_data(G_OBJECT(p), "index"));
    GPtrArray *ss = g_ptr_array_index(player_sessions, pi);
    for (guint j = 0; j < ss->len; j++) {
      ArcwiseLibraryNode *s = g_ptr_array_index(ss, j);
      GPtrArray *w = g_ptr_array_index(session_swings,
                                       GPOINTER_TO_UINT(g_object_get_data(G_OBJECT(s), "index")));
      for (guint k = 0; k < w->len; k++)
        g_ptr_array_add(flat, g_ptr_array_index(w, k));
    }
  }

  self->updating = TRUE;
  g_clear_object(&self->selected);
  g_list_store_remove_all(self->players);
  g_list_store_remove_all(self->swings);
  g_list_store_splice(self->swings, 0, 0, flat->pdata, flat->len);
  g_ptr_array_set_size(self->sessions, 0);
  for (guint i = 0; i < sessions->len; i++)
    g_ptr_array_add(self->sessions, g_object_ref(g_ptr_array_index(sessions, i)));
  rebuild_clubs(self, items);
  self->updating = FALSE;
  /* Counts and marks before the rows exist, so that the root filter sees them. */
  self->reloading = TRUE;
  g_list_store_splice(self->players, 0, 0, players->pdata, players->len);
  refilter(self);
  self->reloading = FALSE;

  ArcwiseSwingItem *want = NULL;
  for (guint i = 0; i < flat->len && keep != 0; i++) {
    ArcwiseSwingItem *it = g_ptr_array_index(flat, i);
    if (it->swing_id == keep)
      want = it;
  }
  if (want == NULL || !arcwise_library_browser_select_swing(self, want))
    arcwise_library_browser_select_nth(self, 0);

  g_ptr_array_unref(flat);
  g_ptr_array_unref(player_sessions);
  g_ptr_array_unref(session_swings);
  g_ptr_array_unref(sessions);
  g_ptr_array_unref(players);
  g_hash_table_unref(pmap);
  g_hash_table_unref(smap);
  g_ptr_array_unref(items);
  if (e != NULL) {
    g_propagate_error(error, g_steal_pointer(&e));
    return FALSE;
  }
  return TRUE;
}

/* ---- public ----------------------------------------------------------------------------- */

void
arcwise_library_browser_set_source(ArcwiseLibraryBrowser *self, ArcwiseLibrarySource *src)
{
  self->source = src;
}

void
arcwise_library_browser_set_readonly(ArcwiseLibraryBrowser *self, gboolean readonly)
{
  self->readonly = readonly;
}

void
arcwise_library_browser_set_units(ArcwiseLibraryBrowser *self, ArcwiseUnits units)
{
  if (self->units == units)
    return;
  self->units = units;
  set_factory(self);   /* every row is made again with the new units */
}

void
arcwise_library_browser_focus_search(ArcwiseLibraryBrowser *self)
{
  gtk_widget_grab_focus(GTK_WIDGET(self->search_entry));
}

GListModel *
arcwise_library_browser_get_swings(ArcwiseLibraryBrowser *self)
{
  return G_LIST_MODEL(self->swings);
}

ArcwiseSwingItem *
arcwise_library_browser_get_selected(ArcwiseLibraryBrowser *self)
{
  return self->selected;
}

guint
arcwise_library_browser_open(ArcwiseLibraryBrowser *self, guint player, guint session)
{
  /* Close everything, top rows last so that positions stay valid. */
  for (guint i = g_list_model_get_n_items(G_LIST_MODEL(self->tree)); i-- > 0;)
    expand_at(self, i, FALSE);
  if (player > 0) {
    guint pp = 0, k = 0;
    for (guint i = 0; i < g_list_model_get_n_items(G_LIST_MODEL(self->tree)); i++)
      if (++k == player) {
        pp = i;
        break;
      }
    if (k == player) {
      expand_at(self, pp, TRUE);
      if (session > 0)
        expand_at(self, pp + session, TRUE);
    }
  }
  guint n = 0;
  for (guint i = 0; i < g_list_model_get_n_items(G_LIST_MODEL(self->tree)); i++)
    n += ARCWISE_IS_SWING_ITEM(row_item(self, i, NULL));
  return n;
}

void
arcwise_library_browser_select_row(ArcwiseLibraryBrowser *self, guint pos)
{
  select_position(self, pos);
}

gint64
arcwise_library_browser_get_import_player(ArcwiseLibraryBrowser *self)
{
  GtkTreeListRow *row = gtk_single_selection_get_selected_item(self->selection);   /* borrowed */
  if (row == NULL)
    return 0;
  g_autoptr(GObject) item = gtk_tree_list_row_get_item(row);
  if (ARCWISE_IS_SWING_ITEM(item))
    return ARCWISE_SWING_ITEM(item)->player_id;
  if (!ARCWISE_IS_LIBRARY_NODE(item))
    return 0;
  ArcwiseLibraryNode *n = ARCWISE_LIBRARY_NODE(item);
  ArcwiseLibraryNode *p = n->kind == NODE_PLAYER ? n : player_of(self, n->player_id);
  return p ? p->id : 0;
}

gboolean
arcwise_library_browser_set_filter(ArcwiseLibraryBrowser *self, const char *key, const char *value)
{
  if (g_str_equal(key, "search")) {
    gtk_editable_set_text(GTK_EDITABLE(self->search_entry), value);
    refilter(self);   /* at once, not after the entry's typing delay */
    return TRUE;
  }
  if (g_str_equal(key, "club")) {
    guint n = g_list_model_get_n_items(G_LIST_MODEL(self->clubs));
    for (guint i = 0; i < n; i++)
      if ((i == 0 && *value == '\0') ||
          (i > 0 && g_strcmp0(gtk_string_list_get_string(self->clubs, i), value) == 0)) {
        gtk_drop_down_set_selected(self->club_dropdown, i);
        return TRUE;
      }
    return FALSE;
  }
  GtkDropDown *dd = g_str_equal(key, "rating") ? self->rating_dropdown
                    : g_str_equal(key, "kind") ? self->kind_dropdown
                    : g_str_equal(key, "data") ? self->data_dropdown : NULL;
  if (dd != NULL) {
    gtk_drop_down_set_selected(dd, (guint)g_ascii_strtoull(value, NULL, 10));
    return TRUE;
  }
  GtkToggleButton *tb = g_str_equal(key, "reference") ? self->reference_toggle
                        : g_str_equal(key, "tagged") ? self->tagged_toggle : NULL;
  if (tb != NULL) {
    gtk_toggle_button_set_active(tb, g_str_equal(value, "1"));
    return TRUE;
  }
  return FALSE;
}

char *
arcwise_library_browser_describe_rows(ArcwiseLibraryBrowser *self)
{
  GString *s = g_string_new(NULL);
  guint sel = gtk_single_selection_get_selected(self->selection);
  guint n = g_list_model_get_n_items(G_LIST_MODEL(self->tree));
  for (guint i = 0; i < n; i++) {
    gpointer item = row_item(self, i, NULL);
    const char *star = i == sel ? "*" : "";
    if (ARCWISE_IS_LIBRARY_NODE(item)) {
      ArcwiseLibraryNode *node = item;
      g_string_append_printf(s, "%c%s\t%" G_GINT64_FORMAT "\t%u\t%u\n",
                             node->kind == NODE_PLAYER ? 'P' : 'S', star, node->id,
                             self->filtering ? node->n_match : node->n_total, node->n_total);
    } else if (ARCWISE_IS_SWING_ITEM(item))
      g_string_append_printf(s, "W%s\t%" G_GINT64_FORMAT "\n", star,
                             ARCWISE_SWING_ITEM(item)->swing_id);
  }
  return g_string_free(s, FALSE);
}

/* ---- class ------------------------------------------------------------------------------ */

static void
arcwise_library_browser_dispose(GObject *object)
{
  ArcwiseLibraryBrowser *self = ARCWISE_LIBRARY_BROWSER(object);
  if (self->tree_view != NULL)
    gtk_list_view_set_model(self->tree_view, NULL);
  g_clear_object(&self->selection);
  g_clear_object(&self->tree);
  g_clear_object(&self->selected);
  g_clear_object(&self->node_filter);
  g_clear_object(&self->swing_filter);
  g_clear_object(&self->clubs);
  g_clear_pointer(&self->sessions, g_ptr_array_unref);
  g_clear_pointer(&self->open_players, g_hash_table_unref);
  g_clear_pointer(&self->open_sessions, g_hash_table_unref);
  g_clear_object(&self->players);
  g_clear_object(&self->swings);
  gtk_widget_dispose_template(GTK_WIDGET(self), ARCWISE_TYPE_LIBRARY_BROWSER);
  G_OBJECT_CLASS(arcwise_library_browser_parent_class)->dispose(object);
}

static void
arcwise_library_browser_class_init(ArcwiseLibraryBrowserClass *klass)
{
  GObjectClass *oc = G_OBJECT_CLASS(klass);
  GtkWidgetClass *wc = GTK_WIDGET_CLASS(klass);
  oc->dispose = arcwise_library_browser_dispose;
  signals[SIGNAL_SWING_SELECTED] = g_signal_new("swing-selected", G_TYPE_FROM_CLASS(klass),
                                                G_SIGNAL_RUN_LAST, 0, NULL, NULL, NULL,
                                                G_TYPE_NONE, 1, ARCWISE_TYPE_SWING_ITEM);
  signals[SIGNAL_PLAYER_SAVED] = g_signal_new("player-saved", G_TYPE_FROM_CLASS(klass),
                                              G_SIGNAL_RUN_LAST, 0, NULL, NULL, NULL,
                                              G_TYPE_NONE, 0);
  gtk_widget_class_set_template_from_resource(wc,
                                              "/org/arcwise/Workbench/arcwise-library-browser.ui");
  gtk_widget_class_set_layout_manager_type(wc, GTK_TYPE_BOX_LAYOUT);
  gtk_widget_class_set_css_name(wc, "librarybrowser");
#define BIND(x) gtk_widget_class_bind_template_child(wc, ArcwiseLibraryBrowser, x)
  BIND(search_entry); BIND(club_dropdown); BIND(rating_dropdown); BIND(kind_dropdown);
  BIND(data_dropdown); BIND(reference_toggle); BIND(tagged_toggle); BIND(clear_button);
  BIND(count_label); BIND(tree_view); BIND(status_label);
#undef BIND
  gtk_widget_class_bind_template_callback(wc, on_filter_changed);
  gtk_widget_class_bind_template_callback(wc, on_clear);
}

static void
arcwise_library_browser_init(ArcwiseLibraryBrowser *self)
{
  gtk_widget_init_template(GTK_WIDGET(self));
  gtk_orientable_set_orientation(GTK_ORIENTABLE(gtk_widget_get_layout_manager(GTK_WIDGET(self))),
                                 GTK_ORIENTATION_VERTICAL);
  gtk_box_layout_set_spacing(GTK_BOX_LAYOUT(gtk_widget_get_layout_manager(GTK_WIDGET(self))), 6);
  self->units = ARCWISE_UNITS_METRIC;
  self->swings = g_list_store_new(ARCWISE_TYPE_SWING_ITEM);
  self->players = g_list_store_new(ARCWISE_TYPE_LIBRARY_NODE);
  self->sessions = g_ptr_array_new_with_free_func(g_object_unref);
  self->open_players = g_hash_table_new_full(g_int64_hash, g_int64_equal, g_free, NULL);
  self->open_sessions = g_hash_table_new_full(g_int64_hash, g_int64_equal, g_free, NULL);
  self->node_filter = gtk_custom_filter_new(node_visible, self, NULL);
  self->swing_filter = gtk_custom_filter_new(swing_visible, self, NULL);
  GtkFilterListModel *root = gtk_filter_list_model_new(G_LIST_MODEL(g_object_ref(self->players)),
                                                       GTK_FILTER(g_object_ref(self->node_filter)));
  self->tree = gtk_tree_list_model_new(G_LIST_MODEL(root), FALSE, FALSE, create_children, self,
                                       NULL);
  self->selection = gtk_single_selection_new(G_LIST_MODEL(g_object_ref(self->tree)));
  gtk_single_selection_set_autoselect(self->selection, FALSE);
  gtk_single_selection_set_can_unselect(self->selection, TRUE);
  g_signal_connect(self->selection, "selection-changed", G_CALLBACK(on_selection_changed), self);
  set_factory(self);
  gtk_list_view_set_model(self->tree_view, GTK_SELECTION_MODEL(self->selection));
  g_signal_connect(self->tree_view, "activate", G_CALLBACK(on_activate), self);

  GtkEventController *keys = gtk_event_controller_key_new();
  gtk_event_controller_set_propagation_phase(keys, GTK_PHASE_CAPTURE);
  g_signal_connect(keys, "key-pressed", G_CALLBACK(on_key), self);
  gtk_widget_add_controller(GTK_WIDGET(self->tree_view), keys);
  GtkEventController *skeys = gtk_event_controller_key_new();
  g_signal_connect(skeys, "key-pressed", G_CALLBACK(on_search_key), self);
  gtk_widget_add_controller(GTK_WIDGET(self->search_entry), skeys);

  g_signal_connect(self->club_dropdown, "notify::selected", G_CALLBACK(on_dropdown_notify), self);
  g_signal_connect(self->rating_dropdown, "notify::selected", G_CALLBACK(on_dropdown_notify), self);
  g_signal_connect(self->kind_dropdown, "notify::selected", G_CALLBACK(on_dropdown_notify), self);
  g_signal_connect(self->data_dropdown, "notify::selected", G_CALLBACK(on_dropdown_notify), self);
  refilter(self);
}
