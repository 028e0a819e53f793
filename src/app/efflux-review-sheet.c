/* SPDX-License-Identifier: GPL-3.0-or-later */
#define G_LOG_DOMAIN "efflux-review-sheet"

#include "config.h"

#include <glib/gi18n.h>
#include <math.h>
#include <string.h>

#include "efflux-banner.h"
#include "efflux-resources.h"
#include "efflux-review-sheet.h"
#include "efflux-sample.h"
#include "efflux-settings.h"
#include "efflux-sources.h"
#include "efflux-window.h"

/* the dropdown's entries: no status, then the core's statuses in their enum order */
#define N_CHOICES 4

typedef struct
{
  char        *mine;        /* my lobe, NULL when only theirs */
  char        *theirs;      /* their lobe, NULL when only mine */
  char        *text;        /* the figures, one line */
  GtkDropDown *status;      /* NULL for a lobe only mine */
  GtkEntry    *note;
} ReviewRow;

struct _EffluxReviewSheet
{
  GtkWidget          parent_instance;

  /* template children */
  GtkRevealer       *revealer;
  GtkLabel          *colleague_label;
  GtkWidget         *busy_box;
  GtkSpinner        *spinner;
  GtkLabel          *message_label;
  GtkListBox        *list;

  GSimpleActionGroup *actions;
  EffluxDocument    *document;
  EffluxSkyView     *sky_view;     /* weak */
  EffluxDossier     *theirs;       /* the colleague's dossier, NULL when none */
  char              *theirs_path;  /* absolute */
  char              *author;
  EffluxComparison  *comparison;
  GPtrArray         *rows;         /* ReviewRow * */
  GCancellable      *cancellable;
  guint              compare_timeout;
  guint              serial;
  char              *reviewer;     /* the name for dossiers that name none */
  gboolean           asking;       /* the reviewer's name is being asked */
  gboolean           updating;     /* rows are being filled from the dossier */
  char              *message;
};

G_DEFINE_FINAL_TYPE (EffluxReviewSheet, efflux_review_sheet, GTK_TYPE_WIDGET)

enum {
  PROP_0,
  PROP_REVEALED,
  N_PROPS
};

enum {
  SIGNAL_COMPARED,
  N_SIGNALS
};

static GParamSpec *properties[N_PROPS];
static guint signals[N_SIGNALS];

static void fill_rows (EffluxReviewSheet *self);
static void sync_notes (EffluxReviewSheet *self);

static void
review_row_free (gpointer data)
{
  ReviewRow *r = data;

  g_free (r->mine);
  g_free (r->theirs);
  g_free (r->text);
  g_free (r);
}

static void
show_message (EffluxReviewSheet *self,
              const char        *message)
{
  GtkRoot *root = gtk_widget_get_root (GTK_WIDGET (self));

  /* a message of ours still in the window's message area goes when it is answered or replaced */
  if (self->message != NULL && EFFLUX_IS_WINDOW (root)
      && g_strcmp0 (efflux_window_get_error (EFFLUX_WINDOW (root)), self->message) == 0
      && g_strcmp0 (self->message, message) != 0)
    efflux_banner_hide (EFFLUX_BANNER (efflux_window_get_banner (EFFLUX_WINDOW (root))));
  g_free (self->message);
  self->message = message && *message ? g_strdup (message) : NULL;
  gtk_label_set_text (self->message_label, self->message ? self->message : "");
  gtk_widget_set_visible (GTK_WIDGET (self->message_label), self->message != NULL);
  if (self->message != NULL && EFFLUX_IS_WINDOW (root))
    efflux_window_show_error (EFFLUX_WINDOW (root), self->message);
}

static void
set_busy (EffluxReviewSheet *self,
          gboolean           busy)
{
  gtk_widget_set_visible (self->busy_box, busy);
  if (busy)
    gtk_spinner_start (self->spinner);
  else
    gtk_spinner_stop (self->spinner);
}

static void
set_revealed (EffluxReviewSheet *self,
              gboolean           revealed)
{
  if (gtk_revealer_get_reveal_child (self->revealer) == revealed)
    return;
  gtk_revealer_set_reveal_child (self->revealer, revealed);
  if (self->actions != NULL)
    g_simple_action_set_state (G_SIMPLE_ACTION (g_action_map_lookup_action (G_ACTION_MAP (self->actions), "show")),
                               g_variant_new_boolean (revealed));
  g_object_notify_by_pspec (G_OBJECT (self), properties[PROP_REVEALED]);
}

static void
update_actions (EffluxReviewSheet *self)
{
  g_simple_action_set_enabled (G_SIMPLE_ACTION (g_action_map_lookup_action (G_ACTION_MAP (self->actions), "open")),
                               self->document != NULL);
  g_simple_action_set_enabled (G_SIMPLE_ACTION (g_action_map_lookup_action (G_ACTION_MAP (self->actions), "stop")),
                               self->theirs != NULL);
}

/* ---- the comparison, in a worker ---- */

typedef struct
{
  EffluxDossier *mine;
  EffluxDossier *theirs;
} CompareJob;

static void
compare_job_free (gpointer data)
{
  CompareJob *job = data;

  g_clear_pointer (&job->mine, efflux_dossier_free);
  g_clear_pointer (&job->theirs, efflux_dossier_free);
  g_free (job);
}

/* A private copy for the worker: the document replaces its dossier on every edit. */
static EffluxDossier *
copy_dossier (const EffluxDossier *d,
              GError             **error)
{
  g_autofree char *data = NULL;
  gsize length = 0;

  data = g_key_file_to_data (d->keyfile, &length, NULL);
  return efflux_dossier_new_from_data (data, (gssize) length, d->path, d->dir, error);
}

static void
compare_worker (GTask        *task,
                gpointer      source_object,
                gpointer      task_data,
                GCancellable *cancellable)
{
  CompareJob *job = task_data;
  GError *error = NULL;
  EffluxComparison *c = efflux_compare_dossiers (job->mine, job->theirs, cancellable, &error);

  if (c == NULL)
    g_task_return_error (task, error);
  else
    g_task_return_pointer (task, c, (GDestroyNotify) efflux_comparison_free);
}

static void
compare_done (GObject      *object,
              GAsyncResult *res,
              gpointer      user_data)
{
  EffluxReviewSheet *self = EFFLUX_REVIEW_SHEET (object);
  g_autoptr(GError) error = NULL;
  EffluxComparison *c = g_task_propagate_pointer (G_TASK (res), &error);

  if (GPOINTER_TO_UINT (user_data) != self->serial)
    {
      g_clear_pointer (&c, efflux_comparison_free);
      return;   /* replaced by a newer comparison, or stopped */
    }
  g_clear_object (&self->cancellable);
  set_busy (self, FALSE);
  if (c == NULL)
    show_message (self, error->message);
  else
    {
      g_clear_pointer (&self->comparison, efflux_comparison_free);
      self->comparison = c;
      show_message (self, NULL);
      fill_rows (self);
    }
  g_signal_emit (self, signals[SIGNAL_COMPARED], 0);
}

static void
start_compare (EffluxReviewSheet *self)
{
  g_autoptr(GTask) task = NULL;
  g_autoptr(GError) error = NULL;
  CompareJob *job;

  g_clear_handle_id (&self->compare_timeout, g_source_remove);
  if (self->cancellable != NULL)
    g_cancellable_cancel (self->cancellable);
  g_clear_object (&self->cancellable);
  self->serial++;
  if (self->document == NULL || self->theirs == NULL)
    {
      set_busy (self, FALSE);
      return;
    }
  job = g_new0 (CompareJob, 1);
  job->mine = copy_dossier (efflux_document_get_dossier (self->document), &error);
  if (job->mine != NULL)
    job->theirs = copy_dossier (self->theirs, &error);
  if (job->theirs == NULL)
    {
      compare_job_free (job);
      show_message (self, error->message);
      return;
    }
  self->cancellable = g_cancellable_new ();
  set_busy (self, TRUE);
  task = g_task_new (self, self->cancellable, compare_done, GUINT_TO_POINTER (self->serial));
  g_task_set_source_tag (task, start_compare);
  g_task_set_task_data (task, job, compare_job_free);
  g_task_run_in_thread (task, compare_worker);
}

static gboolean
compare_timeout_cb (gpointer user_data)
{
  EffluxReviewSheet *self = user_data;

  self->compare_timeout = 0;
  start_compare (self);
  return G_SOURCE_REMOVE;
}

/* ---- the rows ---- */

static char *
format_ratio (double value)
{
  if (!isfinite (value))
    return g_strdup ("–");
  return g_strdup_printf ("%.3g", value);
}

static char *
format_dv (double value)
{
  if (!isfinite (value))
    return g_strdup ("–");
  return g_strdup_printf ("%+.2f", value);
}

static char *
row_title (const EffluxCompareRow *c)
{
  if (c->mine != NULL && c->theirs != NULL)
    /* Translators: a lobe pair in the Review sheet: "MINE ↔ THEIRS (matched by name|overlap)" */
    return g_strdup_printf (_("%s ↔ %s (by %s)"), c->mine, c->theirs,
                            c->match == EFFLUX_MATCH_NAME ? _("name") : _("overlap"));
  if (c->theirs != NULL)
    return g_strdup_printf (_("%s: only theirs"), c->theirs);
  return g_strdup_printf (_("%s: only yours"), c->mine);
}

/* A matched pair's overlap, range differences and ratios. */
static char *
pair_figures (const EffluxCompareRow *c)
{
  g_autofree char *dv1 = format_dv (c->dv1_kms);
  g_autofree char *dv2 = format_dv (c->dv2_kms);
  g_autofree char *m = format_ratio (c->ratio[EFFLUX_RATIO_MASS]);
  g_autofree char *p = format_ratio (c->ratio[EFFLUX_RATIO_MOMENTUM]);
  g_autofree char *e = format_ratio (c->ratio[EFFLUX_RATIO_ENERGY]);
  g_autofree char *t = format_ratio (c->ratio[EFFLUX_RATIO_TDYN]);
  g_autofree char *iou = isfinite (c->iou) ? g_strdup_printf ("%.3f", c->iou) : g_strdup ("–");

  /* Translators: the figures of a lobe pair; Δv are theirs minus mine, ratios theirs / mine */
  return g_strdup_printf (_("IoU %s · Δv₁ %s, Δv₂ %s km/s\nmass ×%s · momentum ×%s · energy ×%s · tdyn ×%s"),
                          iou, dv1, dv2, m, p, e, t);
}

static char *
row_figures (const EffluxCompareRow *c)
{
  if (c->mine == NULL)
    return g_strdup (_("No lobe of yours has its name or overlaps it."));
  if (c->theirs == NULL)
    return g_strdup (_("No lobe of theirs has its name or overlaps it."));
  return pair_figures (c);
}

static ReviewRow *
row_for_widget (EffluxReviewSheet *self,
                GObject           *widget)
{
  return g_object_get_data (widget, "efflux-review-row");
}

/* from_status: the dropdown changed ("no note" then removes the note, whatever the entry says);
 * else the entry was committed. */
static void
write_row (EffluxReviewSheet *self,
           ReviewRow         *r,
           gboolean           from_status)
{
  g_autoptr(GError) error = NULL;
  guint choice;
  const char *text;

  if (self->updating || r->theirs == NULL)
    return;
  choice = gtk_drop_down_get_selected (r->status);
  text = gtk_editable_get_text (GTK_EDITABLE (r->note));
  if (choice == 0 && *text != '\0' && !from_status)
    {
      /* a note without a status: questioned (a remark to discuss) */
      self->updating = TRUE;
      gtk_drop_down_set_selected (r->status, 1 + EFFLUX_REVIEW_QUESTIONED);
      self->updating = FALSE;
      choice = 1 + EFFLUX_REVIEW_QUESTIONED;
    }
  if (!efflux_review_sheet_set_note (self, r->theirs, choice > 0,
                                     choice > 0 ? (EffluxReviewStatus) (choice - 1) : EFFLUX_REVIEW_AGREED,
                                     text, &error) && error != NULL)
    show_message (self, error->message);
}

static void
status_changed (GtkDropDown       *dropdown,
                GParamSpec        *pspec,
                EffluxReviewSheet *self)
{
  ReviewRow *r = row_for_widget (self, G_OBJECT (dropdown));

  if (r != NULL)
    write_row (self, r, TRUE);
}

static void
note_activated (GtkEntry          *entry,
                EffluxReviewSheet *self)
{
  ReviewRow *r = row_for_widget (self, G_OBJECT (entry));

  if (r != NULL)
    write_row (self, r, FALSE);
}

static void
note_focus_left (GtkEventControllerFocus *focus,
                 EffluxReviewSheet       *self)
{
  GtkWidget *entry = gtk_event_controller_get_widget (GTK_EVENT_CONTROLLER (focus));
  ReviewRow *r = row_for_widget (self, G_OBJECT (entry));

  if (r != NULL)
    write_row (self, r, FALSE);
}

static GtkWidget *
build_row (EffluxReviewSheet      *self,
           ReviewRow              *r,
           const EffluxCompareRow *c)
{
  GtkWidget *box = gtk_box_new (GTK_ORIENTATION_VERTICAL, 4);
  g_autofree char *title = row_title (c);
  g_autofree char *figures = row_figures (c);
  GtkWidget *label;

  gtk_widget_add_css_class (box, "efflux-review-row");
  label = gtk_label_new (title);
  gtk_label_set_xalign (GTK_LABEL (label), 0.0);
  gtk_label_set_ellipsize (GTK_LABEL (label), PANGO_ELLIPSIZE_END);
  gtk_widget_add_css_class (label, "heading");
  gtk_widget_add_css_class (label, c->kind == EFFLUX_LOBE_RED ? "efflux-red" : "efflux-blue");
  gtk_box_append (GTK_BOX (box), label);
  label = gtk_label_new (figures);
  gtk_label_set_xalign (GTK_LABEL (label), 0.0);
  gtk_label_set_wrap (GTK_LABEL (label), TRUE);
  gtk_widget_add_css_class (label, "caption");
  gtk_widget_add_css_class (label, "efflux-review-figures");
  gtk_box_append (GTK_BOX (box), label);
  r->text = g_strdup_printf ("%s %s", title, figures);
  for (char *p = r->text; *p != '\0'; p++)
    if (*p == '\n')
      *p = ' ';
  if (c->theirs != NULL)
    {
      const char *choices[N_CHOICES + 1] = {
        /* Translators: no review status chosen for a lobe */
        _("no note"), NULL, NULL, NULL, NULL
      };
      GtkWidget *line = gtk_box_new (GTK_ORIENTATION_HORIZONTAL, 6);
      GtkEventController *focus;

      for (int i = 0; i < N_CHOICES - 1; i++)
        choices[i + 1] = i == EFFLUX_REVIEW_AGREED ? _("agreed")
                         : i == EFFLUX_REVIEW_QUESTIONED ? _("questioned") : _("changed");
      r->status = GTK_DROP_DOWN (gtk_drop_down_new_from_strings (choices));
      gtk_widget_set_tooltip_text (GTK_WIDGET (r->status), _("What you think of their lobe"));
      g_object_set_data (G_OBJECT (r->status), "efflux-review-row", r);
      r->note = GTK_ENTRY (gtk_entry_new ());
      gtk_widget_set_hexpand (GTK_WIDGET (r->note), TRUE);
      gtk_entry_set_placeholder_text (r->note, _("Note on their lobe"));
      gtk_widget_set_tooltip_text (GTK_WIDGET (r->note),
                                   _("One line, kept in your dossier; Enter or leaving the field records it"));
      g_object_set_data (G_OBJECT (r->note), "efflux-review-row", r);
      gtk_box_append (GTK_BOX (line), GTK_WIDGET (r->status));
      gtk_box_append (GTK_BOX (line), GTK_WIDGET (r->note));
      gtk_box_append (GTK_BOX (box), line);
      g_signal_connect (r->status, "notify::selected", G_CALLBACK (status_changed), self);
      g_signal_connect (r->note, "activate", G_CALLBACK (note_activated), self);
      focus = gtk_event_controller_focus_new ();
      g_signal_connect (focus, "leave", G_CALLBACK (note_focus_left), self);
      gtk_widget_add_controller (GTK_WIDGET (r->note), focus);
    }
  return box;
}

static void
clear_rows (EffluxReviewSheet *self)
{
  GtkWidget *child;

  self->updating = TRUE;
  while ((child = gtk_widget_get_first_child (GTK_WIDGET (self->list))) != NULL)
    gtk_list_box_remove (self->list, child);
  self->updating = FALSE;
  g_ptr_array_set_size (self->rows, 0);
}

static void
fill_rows (EffluxReviewSheet *self)
{
  clear_rows (self);
  if (self->comparison == NULL)
    return;
  self->updating = TRUE;
  for (guint i = 0; i < self->comparison->rows->len; i++)
    {
      const EffluxCompareRow *c = g_ptr_array_index (self->comparison->rows, i);
      ReviewRow *r = g_new0 (ReviewRow, 1);

      r->mine = g_strdup (c->mine);
      r->theirs = g_strdup (c->theirs);
      g_ptr_array_add (self->rows, r);
      gtk_list_box_append (self->list, build_row (self, r, c));
    }
  self->updating = FALSE;
  sync_notes (self);
}

/* The dropdowns and entries show the notes the dossier holds. */
static void
sync_notes (EffluxReviewSheet *self)
{
  g_autoptr(EffluxReview) review = NULL;
  g_autoptr(GError) error = NULL;

  if (self->document == NULL)
    return;
  review = efflux_review_read (efflux_document_get_dossier (self->document), &error);
  if (review == NULL)
    {
      show_message (self, error->message);
      return;
    }
  self->updating = TRUE;
  for (guint i = 0; i < self->rows->len; i++)
    {
      ReviewRow *r = g_ptr_array_index (self->rows, i);
      const EffluxReviewNote *n;

      if (r->theirs == NULL)
        continue;
      n = efflux_review_find (review, r->theirs);
      gtk_drop_down_set_selected (r->status, n ? 1 + (guint) n->status : 0);
      if (g_strcmp0 (gtk_editable_get_text (GTK_EDITABLE (r->note)), n ? n->note : "") != 0)
        gtk_editable_set_text (GTK_EDITABLE (r->note), n ? n->note : "");
    }
  self->updating = FALSE;
}

/* ---- the colleague's dossier ---- */

/* The colleague's name: who drew their lobes, else who reviews in their dossier, else an author
 * key in [Source], else the file's owner. */
static char *
find_author (const EffluxDossier *d,
             const char          *path)
{
  g_autofree char *reviewer = NULL;
  g_autofree char *source_author = NULL;
  g_autoptr(GFile) file = NULL;
  g_autoptr(GFileInfo) info = NULL;

  if (efflux_dossier_author (d) != NULL && *efflux_dossier_author (d) != '\0')
    return g_strdup (efflux_dossier_author (d));
  reviewer = g_key_file_get_string (d->keyfile, "Review", "reviewer", NULL);
  if (reviewer != NULL && *g_strstrip (reviewer) != '\0')
    return g_steal_pointer (&reviewer);
  source_author = g_key_file_get_string (d->keyfile, "Source", "author", NULL);
  if (source_author != NULL && *g_strstrip (source_author) != '\0')
    return g_steal_pointer (&source_author);
  file = g_file_new_for_path (path);
  info = g_file_query_info (file, G_FILE_ATTRIBUTE_OWNER_USER_REAL "," G_FILE_ATTRIBUTE_OWNER_USER,
                            G_FILE_QUERY_INFO_NONE, NULL, NULL);
  if (info != NULL)
    {
      const char *real = g_file_info_get_attribute_string (info, G_FILE_ATTRIBUTE_OWNER_USER_REAL);
      const char *user = g_file_info_get_attribute_string (info, G_FILE_ATTRIBUTE_OWNER_USER);

      if (real != NULL && *real != '\0')
        return g_strdup (real);
      if (user != NULL && *user != '\0')
        return g_strdup (user);
    }
  return NULL;
}

static void
show_colleague (EffluxReviewSheet *self)
{
  if (self->theirs_path == NULL)
    {
      gtk_label_set_text (self->colleague_label,
                          _("Open a colleague’s dossier of this source to compare their lobes with yours and note what you think of each."));
      return;
    }
  {
    g_autofree char *base = g_path_get_basename (self->theirs_path);
    /* Translators: the colleague's dossier in the Review sheet: "FILE by AUTHOR, dashed on the map" */
    g_autofree char *text = self->author
                              ? g_strdup_printf (_("%s by %s, dashed on the map"), base, self->author)
                              : g_strdup_printf (_("%s, dashed on the map"), base);

    gtk_label_set_text (self->colleague_label, text);
    gtk_widget_set_tooltip_text (GTK_WIDGET (self->colleague_label), self->theirs_path);
  }
}

void
efflux_review_sheet_stop (EffluxReviewSheet *self)
{
  g_return_if_fail (EFFLUX_IS_REVIEW_SHEET (self));
  g_clear_handle_id (&self->compare_timeout, g_source_remove);
  if (self->cancellable != NULL)
    g_cancellable_cancel (self->cancellable);
  g_clear_object (&self->cancellable);
  self->serial++;
  set_busy (self, FALSE);
  g_clear_pointer (&self->theirs, efflux_dossier_free);
  g_clear_pointer (&self->theirs_path, g_free);
  g_clear_pointer (&self->author, g_free);
  g_clear_pointer (&self->comparison, efflux_comparison_free);
  clear_rows (self);
  if (self->sky_view != NULL)
    efflux_sky_view_set_overlay (self->sky_view, NULL, NULL);
  show_colleague (self);
  update_actions (self);
}

gboolean
efflux_review_sheet_open (EffluxReviewSheet *self,
                          const char        *path,
                          GError           **error)
{
  g_autoptr(EffluxDossier) theirs = NULL;
  g_autofree char *abs = NULL;
  const EffluxDossier *mine;
  g_autoptr(GError) local = NULL;
  g_autofree char *position_note = NULL;
  double separation = 0.0;

  g_return_val_if_fail (EFFLUX_IS_REVIEW_SHEET (self), FALSE);
  g_return_val_if_fail (path != NULL, FALSE);
  set_revealed (self, TRUE);
  if (self->document == NULL)
    {
      g_set_error (&local, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   _("%s: open your own dossier of the source first, then review a colleague’s"),
                   path);
      show_message (self, local->message);
      g_propagate_error (error, g_steal_pointer (&local));
      return FALSE;
    }
  mine = efflux_document_get_dossier (self->document);
  abs = g_canonicalize_filename (path, NULL);
  theirs = efflux_dossier_load (abs, &local);
  if (theirs == NULL)
    {
      show_message (self, local->message);
      g_propagate_error (error, g_steal_pointer (&local));
      return FALSE;
    }
  /* the same source by name (efflux_compare_same_source); the positions only advise */
  if (!efflux_compare_same_source (mine, theirs, &separation))
    {
      if (separation <= EFFLUX_SAME_SOURCE_ARCSEC)
        g_set_error (&local, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                     _("%s: [Source] name is '%s', another source than '%s' of %s, though %.2f arcsec away: "
                       "if both are one source, give them the same name"),
                     abs, theirs->name, mine->name, mine->path, separation);
      else
        g_set_error (&local, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                     _("%s: [Source] name is '%s', another source than '%s' of %s: review a dossier of the same source"),
                     abs, theirs->name, mine->name, mine->path);
      show_message (self, local->message);
      g_propagate_error (error, g_steal_pointer (&local));
      return FALSE;
    }
  if (separation > EFFLUX_SAME_SOURCE_ARCSEC)
    position_note = g_strdup_printf (_("%s: [Source] ra-deg, dec-deg lie %.1f arcsec from those of %s: "
                                       "check either position"),
                                     abs, separation, mine->path);
  efflux_review_sheet_stop (self);
  self->theirs_path = g_steal_pointer (&abs);
  self->author = find_author (theirs, self->theirs_path);
  self->theirs = g_steal_pointer (&theirs);
  if (self->sky_view != NULL)
    efflux_sky_view_set_overlay (self->sky_view, self->theirs, self->author);
  show_colleague (self);
  show_message (self, position_note);
  update_actions (self);
  start_compare (self);
  return TRUE;
}

/* ---- notes ---- */

typedef struct
{
  EffluxReviewSheet  *self;
  GtkEntry           *entry;
  char               *lobe;
  gboolean            has_status;
  EffluxReviewStatus  status;
  char               *note;
} PendingNote;

static void
pending_note_free (gpointer data)
{
  PendingNote *p = data;

  g_object_unref (p->self);
  g_free (p->lobe);
  g_free (p->note);
  g_free (p);
}

static char *
default_reviewer (void)
{
  GSettings *settings = efflux_settings_get ();
  g_autofree char *saved = NULL;
  g_autoptr(GSettingsSchema) schema = NULL;
  const char *real = g_get_real_name ();

  if (settings != NULL)
    {
      g_object_get (settings, "settings-schema", &schema, NULL);
      if (schema != NULL && g_settings_schema_has_key (schema, "reviewer-name"))
        saved = g_settings_get_string (settings, "reviewer-name");
    }
  if (saved != NULL && *saved != '\0')
    return g_steal_pointer (&saved);
  /* GLib says "Unknown" when the system does not know */
  if (real != NULL && *real != '\0' && g_strcmp0 (real, "Unknown") != 0)
    return g_strdup (real);
  return g_strdup (g_get_user_name ());
}

static void
reviewer_response (GtkDialog *dialog,
                   int        response,
                   gpointer   user_data)
{
  PendingNote *p = g_object_get_data (G_OBJECT (dialog), "efflux-pending");
  EffluxReviewSheet *self = p->self;
  g_autofree char *name = g_strstrip (g_strdup (gtk_editable_get_text (GTK_EDITABLE (p->entry))));
  g_autoptr(GError) error = NULL;

  self->asking = FALSE;
  if (response == GTK_RESPONSE_ACCEPT && *name != '\0')
    {
      GSettings *settings = efflux_settings_get ();
      g_autoptr(GSettingsSchema) schema = NULL;

      if (settings != NULL)
        {
          g_object_get (settings, "settings-schema", &schema, NULL);
          if (schema != NULL && g_settings_schema_has_key (schema, "reviewer-name"))
            g_settings_set_string (settings, "reviewer-name", name);
        }
      efflux_review_sheet_set_reviewer (self, name);
      if (!efflux_review_sheet_set_note (self, p->lobe, p->has_status, p->status, p->note, &error)
          && error != NULL)
        show_message (self, error->message);
    }
  else
    sync_notes (self);   /* nothing written: show the dossier's notes again */
  gtk_window_destroy (GTK_WINDOW (dialog));
}

static void
ask_reviewer (EffluxReviewSheet  *self,
              const char         *lobe,
              gboolean            has_status,
              EffluxReviewStatus  status,
              const char         *note)
{
  GtkRoot *root = gtk_widget_get_root (GTK_WIDGET (self));
  g_autofree char *name = default_reviewer ();
  PendingNote *p = g_new0 (PendingNote, 1);
  GtkWidget *dialog, *content, *label;

  self->asking = TRUE;
  p->self = g_object_ref (self);
  p->lobe = g_strdup (lobe);
  p->has_status = has_status;
  p->status = status;
  p->note = g_strdup (note);
  dialog = gtk_dialog_new_with_buttons (_("Who Reviews?"), GTK_IS_WINDOW (root) ? GTK_WINDOW (root) : NULL,
                                        GTK_DIALOG_MODAL | GTK_DIALOG_DESTROY_WITH_PARENT,
                                        _("_Cancel"), GTK_RESPONSE_CANCEL,
                                        _("_Sign the Notes"), GTK_RESPONSE_ACCEPT,
                                        NULL);
  gtk_dialog_set_default_response (GTK_DIALOG (dialog), GTK_RESPONSE_ACCEPT);
  content = gtk_dialog_get_content_area (GTK_DIALOG (dialog));
  gtk_box_set_spacing (GTK_BOX (content), 8);
  gtk_widget_set_margin_start (content, 12);
  gtk_widget_set_margin_end (content, 12);
  gtk_widget_set_margin_top (content, 12);
  gtk_widget_set_margin_bottom (content, 12);
  label = gtk_label_new (_("Your name, as the reviewer recorded in this dossier with your notes:"));
  gtk_label_set_wrap (GTK_LABEL (label), TRUE);
  gtk_label_set_xalign (GTK_LABEL (label), 0.0);
  gtk_box_append (GTK_BOX (content), label);
  p->entry = GTK_ENTRY (gtk_entry_new ());
  gtk_editable_set_text (GTK_EDITABLE (p->entry), name);
  gtk_entry_set_activates_default (p->entry, TRUE);
  gtk_box_append (GTK_BOX (content), GTK_WIDGET (p->entry));
  g_object_set_data_full (G_OBJECT (dialog), "efflux-pending", p, pending_note_free);
  g_signal_connect (dialog, "response", G_CALLBACK (reviewer_response), NULL);
  gtk_window_present (GTK_WINDOW (dialog));
}

void
efflux_review_sheet_set_reviewer (EffluxReviewSheet *self,
                                  const char        *reviewer)
{
  g_return_if_fail (EFFLUX_IS_REVIEW_SHEET (self));
  g_free (self->reviewer);
  self->reviewer = reviewer && *reviewer ? g_strdup (reviewer) : NULL;
}

gboolean
efflux_review_sheet_set_note (EffluxReviewSheet  *self,
                              const char         *their_lobe,
                              gboolean            has_status,
                              EffluxReviewStatus  status,
                              const char         *note,
                              GError            **error)
{
  const EffluxDossier *d;
  g_autoptr(EffluxDossier) edited = NULL;
  g_autoptr(EffluxReview) review = NULL;
  g_autofree char *group = NULL;
  const char *groups[4];
  const char *mine = NULL;
  const EffluxReviewNote *old;

  g_return_val_if_fail (EFFLUX_IS_REVIEW_SHEET (self), FALSE);
  g_return_val_if_fail (their_lobe != NULL, FALSE);
  if (self->document == NULL)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, _("No dossier is open for the notes"));
      return FALSE;
    }
  d = efflux_document_get_dossier (self->document);
  review = efflux_review_read (d, error);
  if (review == NULL)
    return FALSE;
  old = efflux_review_find (review, their_lobe);
  if (!has_status && old == NULL)
    return TRUE;   /* nothing to remove */
  if (has_status && old != NULL && old->status == status && g_strcmp0 (old->note, note ? note : "") == 0)
    return TRUE;   /* unchanged */
  if (has_status && review->reviewer == NULL && self->reviewer == NULL)
    {
      if (!self->asking)
        ask_reviewer (self, their_lobe, has_status, status, note);
      return FALSE;
    }
  for (guint i = 0; i < self->rows->len; i++)
    {
      ReviewRow *r = g_ptr_array_index (self->rows, i);

      if (g_strcmp0 (r->theirs, their_lobe) == 0)
        mine = r->mine;
    }
  edited = copy_dossier (d, error);
  if (edited == NULL)
    return FALSE;
  if (has_status)
    {
      if (review->reviewer == NULL || (self->theirs_path != NULL
                                       && g_strcmp0 (review->reviewed_abs, self->theirs_path) != 0))
        efflux_review_set_reviewer (edited, review->reviewer ? NULL : self->reviewer, self->theirs_path);
      efflux_review_set_note (edited, their_lobe, status, note, mine);
    }
  else
    efflux_review_remove_note (edited, their_lobe);
  group = g_strconcat ("Review ", their_lobe, NULL);
  groups[0] = "Review";
  groups[1] = group;
  groups[2] = "Status";
  groups[3] = NULL;
  return efflux_sources_commit_keyfile (self->document, edited->keyfile, groups, 0, error);
}

/* ---- the document ---- */

static gboolean
compared_groups (const char *group)
{
  return group == NULL || g_str_equal (group, "Source") || g_str_equal (group, "Assumptions")
         || g_str_has_prefix (group, "Lobe ") || g_str_has_prefix (group, "Cube ");
}

static void
document_changed (EffluxDocument    *document,
                  const char        *group,
                  EffluxReviewSheet *self)
{
  if (group == NULL || g_str_has_prefix (group, "Review"))
    sync_notes (self);
  if (self->theirs != NULL && compared_groups (group))
    {
      /* measure both again once the edits pause */
      g_clear_handle_id (&self->compare_timeout, g_source_remove);
      self->compare_timeout = g_timeout_add (800, compare_timeout_cb, self);
    }
}

void
efflux_review_sheet_set_document (EffluxReviewSheet *self,
                                  EffluxDocument    *document)
{
  g_autoptr(EffluxReview) review = NULL;

  g_return_if_fail (EFFLUX_IS_REVIEW_SHEET (self));
  if (self->document == document)
    return;
  if (self->document != NULL)
    g_signal_handlers_disconnect_by_data (self->document, self);
  efflux_review_sheet_stop (self);
  show_message (self, NULL);
  g_set_object (&self->document, document);
  if (document != NULL)
    {
      g_signal_connect (document, "changed", G_CALLBACK (document_changed), self);
      /* the colleague's dossier this one was reviewed against, when it is still there */
      review = efflux_review_read (efflux_document_get_dossier (document), NULL);
      if (review != NULL && review->reviewed_abs != NULL
          && g_file_test (review->reviewed_abs, G_FILE_TEST_IS_REGULAR))
        {
          g_autoptr(GError) error = NULL;

          if (!efflux_review_sheet_open (self, review->reviewed_abs, &error))
            g_debug ("%s", error->message);
        }
    }
  update_actions (self);
}

void
efflux_review_sheet_set_sky_view (EffluxReviewSheet *self,
                                  EffluxSkyView     *sky_view)
{
  g_return_if_fail (EFFLUX_IS_REVIEW_SHEET (self));
  if (self->sky_view != NULL)
    g_object_remove_weak_pointer (G_OBJECT (self->sky_view), (gpointer *) &self->sky_view);
  self->sky_view = sky_view;
  if (sky_view != NULL)
    {
      g_object_add_weak_pointer (G_OBJECT (sky_view), (gpointer *) &self->sky_view);
      efflux_sky_view_set_overlay (sky_view, self->theirs, self->author);
    }
}

/* ---- actions ---- */

static void
open_response (GtkNativeDialog *dialog,
               int              response,
               gpointer         user_data)
{
  g_autoptr(EffluxReviewSheet) self = user_data;

  if (response == GTK_RESPONSE_ACCEPT)
    {
      g_autoptr(GFile) file = gtk_file_chooser_get_file (GTK_FILE_CHOOSER (dialog));
      g_autofree char *path = file ? g_file_get_path (file) : NULL;

      if (path != NULL)
        efflux_review_sheet_open (self, path, NULL);
    }
  gtk_native_dialog_destroy (dialog);
  g_object_unref (dialog);
}

static void
open_activated (GSimpleAction *action,
                GVariant      *parameter,
                gpointer       user_data)
{
  EffluxReviewSheet *self = user_data;
  GtkRoot *root = gtk_widget_get_root (GTK_WIDGET (self));
  GtkFileChooserNative *chooser;
  g_autoptr(GtkFileFilter) dossiers = gtk_file_filter_new ();

  chooser = gtk_file_chooser_native_new (_("Review a Colleague’s Dossier"),
                                         GTK_IS_WINDOW (root) ? GTK_WINDOW (root) : NULL,
                                         GTK_FILE_CHOOSER_ACTION_OPEN, _("_Review"), _("_Cancel"));
  gtk_file_filter_set_name (dossiers, _("Dossiers (.efflux)"));
  gtk_file_filter_add_pattern (dossiers, "*.efflux");
  gtk_file_chooser_add_filter (GTK_FILE_CHOOSER (chooser), dossiers);
  gtk_native_dialog_set_modal (GTK_NATIVE_DIALOG (chooser), TRUE);
  g_signal_connect (chooser, "response", G_CALLBACK (open_response), g_object_ref (self));
  gtk_native_dialog_show (GTK_NATIVE_DIALOG (chooser));
}

static void
show_change_state (GSimpleAction *action,
                   GVariant      *value,
                   gpointer       user_data)
{
  set_revealed (EFFLUX_REVIEW_SHEET (user_data), g_variant_get_boolean (value));
}

static void
stop_activated (GSimpleAction *action,
                GVariant      *parameter,
                gpointer       user_data)
{
  efflux_review_sheet_stop (EFFLUX_REVIEW_SHEET (user_data));
}

/* ---- accessors ---- */

GActionGroup *
efflux_review_sheet_get_actions (EffluxReviewSheet *self)
{
  g_return_val_if_fail (EFFLUX_IS_REVIEW_SHEET (self), NULL);
  return G_ACTION_GROUP (self->actions);
}

gboolean
efflux_review_sheet_is_busy (EffluxReviewSheet *self)
{
  g_return_val_if_fail (EFFLUX_IS_REVIEW_SHEET (self), FALSE);
  return self->cancellable != NULL || self->compare_timeout != 0;
}

const EffluxComparison *
efflux_review_sheet_get_comparison (EffluxReviewSheet *self)
{
  g_return_val_if_fail (EFFLUX_IS_REVIEW_SHEET (self), NULL);
  return self->comparison;
}

const char *
efflux_review_sheet_get_message (EffluxReviewSheet *self)
{
  g_return_val_if_fail (EFFLUX_IS_REVIEW_SHEET (self), NULL);
  return self->message;
}

const char *
efflux_review_sheet_get_colleague (EffluxReviewSheet *self)
{
  g_return_val_if_fail (EFFLUX_IS_REVIEW_SHEET (self), NULL);
  return self->theirs_path;
}

const char *
efflux_review_sheet_get_author (EffluxReviewSheet *self)
{
  g_return_val_if_fail (EFFLUX_IS_REVIEW_SHEET (self), NULL);
  return self->author;
}

guint
efflux_review_sheet_get_n_rows (EffluxReviewSheet *self)
{
  g_return_val_if_fail (EFFLUX_IS_REVIEW_SHEET (self), 0);
  return self->rows->len;
}

const char *
efflux_review_sheet_get_row_text (EffluxReviewSheet *self,
                                  guint              index)
{
  g_return_val_if_fail (EFFLUX_IS_REVIEW_SHEET (self), NULL);
  if (index >= self->rows->len)
    return NULL;
  return ((ReviewRow *) g_ptr_array_index (self->rows, index))->text;
}

gboolean
efflux_review_sheet_get_row_status (EffluxReviewSheet  *self,
                                    guint               index,
                                    EffluxReviewStatus *status)
{
  ReviewRow *r;
  guint choice;

  g_return_val_if_fail (EFFLUX_IS_REVIEW_SHEET (self), FALSE);
  if (index >= self->rows->len)
    return FALSE;
  r = g_ptr_array_index (self->rows, index);
  if (r->status == NULL || (choice = gtk_drop_down_get_selected (r->status)) == 0
      || choice == GTK_INVALID_LIST_POSITION)
    return FALSE;
  if (status != NULL)
    *status = (EffluxReviewStatus) (choice - 1);
  return TRUE;
}

const char *
efflux_review_sheet_get_row_note (EffluxReviewSheet *self,
                                  guint              index)
{
  ReviewRow *r;

  g_return_val_if_fail (EFFLUX_IS_REVIEW_SHEET (self), NULL);
  if (index >= self->rows->len)
    return NULL;
  r = g_ptr_array_index (self->rows, index);
  return r->note ? gtk_editable_get_text (GTK_EDITABLE (r->note)) : "";
}

/* ---- the type ---- */

static void
efflux_review_sheet_get_property (GObject    *object,
                                  guint       prop_id,
                                  GValue     *value,
                                  GParamSpec *pspec)
{
  EffluxReviewSheet *self = EFFLUX_REVIEW_SHEET (object);

  switch (prop_id)
    {
    case PROP_REVEALED:
      g_value_set_boolean (value, gtk_revealer_get_reveal_child (self->revealer));
      break;
    default:
      G_OBJECT_WARN_INVALID_PROPERTY_ID (object, prop_id, pspec);
    }
}

static void
efflux_review_sheet_set_property (GObject      *object,
                                  guint         prop_id,
                                  const GValue *value,
                                  GParamSpec   *pspec)
{
  EffluxReviewSheet *self = EFFLUX_REVIEW_SHEET (object);

  switch (prop_id)
    {
    case PROP_REVEALED:
      set_revealed (self, g_value_get_boolean (value));
      break;
    default:
      G_OBJECT_WARN_INVALID_PROPERTY_ID (object, prop_id, pspec);
    }
}

static void
efflux_review_sheet_dispose (GObject *object)
{
  EffluxReviewSheet *self = EFFLUX_REVIEW_SHEET (object);

  g_clear_handle_id (&self->compare_timeout, g_source_remove);
  if (self->cancellable != NULL)
    g_cancellable_cancel (self->cancellable);
  g_clear_object (&self->cancellable);
  self->serial++;
  if (self->document != NULL)
    g_signal_handlers_disconnect_by_data (self->document, self);
  g_clear_object (&self->document);
  if (self->sky_view != NULL)
    g_object_remove_weak_pointer (G_OBJECT (self->sky_view), (gpointer *) &self->sky_view);
  self->sky_view = NULL;
  if (self->rows != NULL)
    g_ptr_array_set_size (self->rows, 0);
  gtk_widget_dispose_template (GTK_WIDGET (self), EFFLUX_TYPE_REVIEW_SHEET);
  G_OBJECT_CLASS (efflux_review_sheet_parent_class)->dispose (object);
}

static void
efflux_review_sheet_finalize (GObject *object)
{
  EffluxReviewSheet *self = EFFLUX_REVIEW_SHEET (object);

  g_clear_pointer (&self->theirs, efflux_dossier_free);
  g_clear_pointer (&self->comparison, efflux_comparison_free);
  g_clear_pointer (&self->rows, g_ptr_array_unref);
  g_clear_object (&self->actions);
  g_free (self->theirs_path);
  g_free (self->author);
  g_free (self->reviewer);
  g_free (self->message);
  G_OBJECT_CLASS (efflux_review_sheet_parent_class)->finalize (object);
}

static void
efflux_review_sheet_class_init (EffluxReviewSheetClass *klass)
{
  GObjectClass *object_class = G_OBJECT_CLASS (klass);
  GtkWidgetClass *widget_class = GTK_WIDGET_CLASS (klass);

  object_class->get_property = efflux_review_sheet_get_property;
  object_class->set_property = efflux_review_sheet_set_property;
  object_class->dispose = efflux_review_sheet_dispose;
  object_class->finalize = efflux_review_sheet_finalize;

  properties[PROP_REVEALED] =
    g_param_spec_boolean ("revealed", NULL, NULL, FALSE,
                          G_PARAM_READWRITE | G_PARAM_EXPLICIT_NOTIFY | G_PARAM_STATIC_STRINGS);
  g_object_class_install_properties (object_class, N_PROPS, properties);
  signals[SIGNAL_COMPARED] =
    g_signal_new ("compared", G_TYPE_FROM_CLASS (klass), G_SIGNAL_RUN_LAST, 0, NULL, NULL, NULL,
                  G_TYPE_NONE, 0);

  g_assert (efflux_get_resource () != NULL);
  gtk_widget_class_set_template_from_resource (widget_class,
                                               "/org/effluxproject/Efflux/efflux-review-sheet.ui");
  gtk_widget_class_bind_template_child (widget_class, EffluxReviewSheet, revealer);
  gtk_widget_class_bind_template_child (widget_class, EffluxReviewSheet, colleague_label);
  gtk_widget_class_bind_template_child (widget_class, EffluxReviewSheet, busy_box);
  gtk_widget_class_bind_template_child (widget_class, EffluxReviewSheet, spinner);
  gtk_widget_class_bind_template_child (widget_class, EffluxReviewSheet, message_label);
  gtk_widget_class_bind_template_child (widget_class, EffluxReviewSheet, list);
  gtk_widget_class_set_layout_manager_type (widget_class, GTK_TYPE_BIN_LAYOUT);
  gtk_widget_class_set_css_name (widget_class, "efflux-review-sheet");
}

static void
efflux_review_sheet_init (EffluxReviewSheet *self)
{
  /* "show" is a toggle of our own: a GPropertyAction would hold a reference to the sheet from
   * the sheet's own action group */
  static const GActionEntry entries[] = {
    { .name = "open", .activate = open_activated },
    { .name = "stop", .activate = stop_activated },
    { .name = "show", .state = "false", .change_state = show_change_state },
  };

  gtk_widget_init_template (GTK_WIDGET (self));
  self->rows = g_ptr_array_new_with_free_func (review_row_free);
  self->actions = g_simple_action_group_new ();
  g_action_map_add_action_entries (G_ACTION_MAP (self->actions), entries, G_N_ELEMENTS (entries), self);
  gtk_widget_insert_action_group (GTK_WIDGET (self), "review", G_ACTION_GROUP (self->actions));
  update_actions (self);
}

GtkWidget *
efflux_review_sheet_new (void)
{
  return g_object_new (EFFLUX_TYPE_REVIEW_SHEET, NULL);
}
