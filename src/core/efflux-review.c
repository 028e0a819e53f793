/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Review notes in the reviewer's dossier (layout in efflux-review.h). */
#include "config.h"

#include "efflux-review.h"

#include <string.h>

#include "efflux-sample.h"

#define REVIEW_GROUP "Review"
#define NOTE_PREFIX "Review "

static void
note_free (gpointer data)
{
  EffluxReviewNote *n = data;

  g_free (n->lobe);
  g_free (n->note);
  g_free (n->mine);
  g_free (n->date);
  g_free (n);
}

void
efflux_review_free (EffluxReview *review)
{
  if (review == NULL)
    return;
  g_free (review->reviewer);
  g_free (review->reviewed);
  g_free (review->reviewed_abs);
  g_clear_pointer (&review->notes, g_ptr_array_unref);
  g_free (review);
}

const char *
efflux_review_status_name (EffluxReviewStatus status)
{
  switch (status)
    {
    case EFFLUX_REVIEW_AGREED:
      return "agreed";
    case EFFLUX_REVIEW_QUESTIONED:
      return "questioned";
    case EFFLUX_REVIEW_CHANGED:
    default:
      return "changed";
    }
}

gboolean
efflux_review_status_from_string (const char         *text,
                                  EffluxReviewStatus *status)
{
  if (g_strcmp0 (text, "agreed") == 0)
    *status = EFFLUX_REVIEW_AGREED;
  else if (g_strcmp0 (text, "questioned") == 0)
    *status = EFFLUX_REVIEW_QUESTIONED;
  else if (g_strcmp0 (text, "changed") == 0)
    *status = EFFLUX_REVIEW_CHANGED;
  else
    return FALSE;
  return TRUE;
}

/* The stripped raw value, NULL when absent or empty. */
static char *
get (GKeyFile   *kf,
     const char *group,
     const char *key)
{
  char *v = g_key_file_get_value (kf, group, key, NULL);

  if (v != NULL && *g_strstrip (v) == '\0')
    g_clear_pointer (&v, g_free);
  return v;
}

static char *
one_line (const char *text)
{
  char *s = g_strdup (text != NULL ? text : "");

  for (char *p = s; *p != '\0'; p++)
    if (*p == '\n' || *p == '\r')
      *p = ' ';
  return g_strstrip (s);
}

EffluxReview *
efflux_review_read (const EffluxDossier *dossier,
                    GError             **error)
{
  g_autoptr (EffluxReview) r = g_new0 (EffluxReview, 1);
  g_auto (GStrv) groups = g_key_file_get_groups (dossier->keyfile, NULL);

  r->notes = g_ptr_array_new_with_free_func (note_free);
  r->reviewer = get (dossier->keyfile, REVIEW_GROUP, "reviewer");
  r->reviewed = get (dossier->keyfile, REVIEW_GROUP, "reviewed");
  if (r->reviewed != NULL)
    r->reviewed_abs = g_path_is_absolute (r->reviewed)
                        ? g_strdup (r->reviewed)
                        : g_build_filename (dossier->dir != NULL ? dossier->dir : ".", r->reviewed, NULL);
  for (gsize i = 0; groups[i] != NULL; i++)
    {
      const char *g = groups[i];
      g_autofree char *status = NULL;
      EffluxReviewNote *n;

      if (!g_str_has_prefix (g, NOTE_PREFIX) || g[strlen (NOTE_PREFIX)] == '\0')
        continue;
      n = g_new0 (EffluxReviewNote, 1);
      g_ptr_array_add (r->notes, n);
      n->lobe = g_strdup (g + strlen (NOTE_PREFIX));
      status = get (dossier->keyfile, g, "status");
      if (!efflux_review_status_from_string (status, &n->status))
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                       "%s: [%s] status: expected agreed, questioned or changed, got '%s'",
                       dossier->path, g, status != NULL ? status : "");
          return NULL;
        }
      n->note = get (dossier->keyfile, g, "note");
      if (n->note == NULL)
        n->note = g_strdup ("");
      n->mine = get (dossier->keyfile, g, "mine");
      n->date = get (dossier->keyfile, g, "date");
    }
  return g_steal_pointer (&r);
}

void
efflux_review_set_reviewer (EffluxDossier *dossier,
                            const char    *reviewer,
                            const char    *reviewed_path)
{
  if (reviewer != NULL)
    {
      g_autofree char *v = one_line (reviewer);

      g_key_file_set_value (dossier->keyfile, REVIEW_GROUP, "reviewer", v);
    }
  if (reviewed_path != NULL)
    {
      g_autofree char *v = one_line (reviewed_path);
      g_autofree char *dir = dossier->dir != NULL && g_path_is_absolute (dossier->dir)
                               ? g_strdup (dossier->dir)
                               : NULL;
      g_autofree char *abs = g_path_is_absolute (v) ? g_strdup (v) : NULL;
      const char *rel = NULL;

      if (dir != NULL && abs != NULL)
        {
          g_autofree char *prefix = g_str_has_suffix (dir, G_DIR_SEPARATOR_S)
                                      ? g_strdup (dir)
                                      : g_strconcat (dir, G_DIR_SEPARATOR_S, NULL);

          if (g_str_has_prefix (abs, prefix))
            rel = abs + strlen (prefix);
        }
      g_key_file_set_value (dossier->keyfile, REVIEW_GROUP, "reviewed", rel != NULL ? rel : v);
    }
}

void
efflux_review_set_note (EffluxDossier      *dossier,
                        const char         *lobe,
                        EffluxReviewStatus  status,
                        const char         *note,
                        const char         *mine)
{
  g_autofree char *group = g_strconcat (NOTE_PREFIX, lobe, NULL);
  g_autofree char *text = one_line (note);
  g_autoptr (GDateTime) now = g_date_time_new_now_utc ();
  g_autofree char *date = g_date_time_format (now, "%Y-%m-%dT%H:%M:%SZ");

  g_key_file_set_value (dossier->keyfile, group, "status", efflux_review_status_name (status));
  g_key_file_set_value (dossier->keyfile, group, "note", text);
  if (mine != NULL)
    {
      g_autofree char *m = one_line (mine);

      g_key_file_set_value (dossier->keyfile, group, "mine", m);
    }
  else
    g_key_file_remove_key (dossier->keyfile, group, "mine", NULL);
  g_key_file_set_value (dossier->keyfile, group, "date", date);
  {
    g_autofree char *reviewer = get (dossier->keyfile, REVIEW_GROUP, "reviewer");

    if (reviewer != NULL)
      efflux_sample_set_reviewed (dossier->keyfile, reviewer, now);
  }
}

gboolean
efflux_review_remove_note (EffluxDossier *dossier,
                           const char    *lobe)
{
  g_autofree char *group = g_strconcat (NOTE_PREFIX, lobe, NULL);

  return g_key_file_remove_group (dossier->keyfile, group, NULL);
}

const EffluxReviewNote *
efflux_review_find (const EffluxReview *review,
                    const char         *lobe)
{
  for (guint i = 0; i < review->notes->len; i++)
    {
      const EffluxReviewNote *n = g_ptr_array_index (review->notes, i);

      if (strcmp (n->lobe, lobe) == 0)
        return n;
    }
  return NULL;
}
