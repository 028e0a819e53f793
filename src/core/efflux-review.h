/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <glib.h>

#include "efflux-dossier.h"

G_BEGIN_DECLS

/* Review notes: what a reviewer thinks of each lobe of a colleague's dossier, kept in the
 * reviewer's own dossier (groups and keys of Efflux's own, beyond CONTRACT.md):
 *
 *   [Review]
 *   # who reviews (the owner of this dossier) and the colleague's dossier, relative to this one
 *   reviewer=A. Reviewer
 *   reviewed=../colleague/source-a.efflux
 *
 *   # one group per lobe of the colleague's dossier, by its name there
 *   [Review blue-1]
 *   # agreed | questioned | changed
 *   status=questioned
 *   # free text on one line
 *   note=the outline takes in the ambient cloud to the east
 *   # the lobe of this dossier it was compared with (optional)
 *   mine=blue-a
 *   # when the note was last set, ISO 8601 UTC
 *   date=2026-12-02T01:00:00Z
 *
 * Setting a note, once the reviewer is known, also records [Status] reviewed-by and reviewed
 * (efflux_sample_set_reviewed, efflux-sample.h), so that a sample's Sources list shows the
 * reviewer's dossier as reviewed. Other groups and comments are untouched; efflux_dossier_save
 * writes the notes with the rest. */

typedef enum
{
  EFFLUX_REVIEW_AGREED,
  EFFLUX_REVIEW_QUESTIONED,
  EFFLUX_REVIEW_CHANGED,
} EffluxReviewStatus;

typedef struct
{
  char               *lobe;        /* the colleague's lobe */
  EffluxReviewStatus  status;
  char               *note;        /* "" when none */
  char               *mine;        /* NULL when absent */
  char               *date;        /* NULL when absent */
} EffluxReviewNote;

typedef struct
{
  char      *reviewer;             /* NULL when absent */
  char      *reviewed;             /* as written, NULL when absent */
  char      *reviewed_abs;         /* resolved against the dossier's directory */
  GPtrArray *notes;                /* EffluxReviewNote *, file order */
} EffluxReview;

/* Read the review groups. A dossier without them gives an empty review. Errors name the file,
 * group and key: "mine.efflux: [Review blue-1] status: expected agreed, questioned or changed,
 * got 'maybe'". */
EffluxReview *efflux_review_read        (const EffluxDossier *dossier,
                                         GError             **error);
void          efflux_review_free        (EffluxReview *review);

/* Set [Review] reviewer and reviewed (a path: written relative to the dossier's directory when
 * it lies below it, else absolute). Either may be NULL to leave it. */
void          efflux_review_set_reviewer (EffluxDossier *dossier,
                                          const char    *reviewer,
                                          const char    *reviewed_path);
/* Set (add or replace) the note on a colleague's lobe; mine may be NULL; date now (UTC). With
 * [Review] reviewer set, [Status] reviewed-by and reviewed are set too (see above). */
void          efflux_review_set_note    (EffluxDossier      *dossier,
                                         const char         *lobe,
                                         EffluxReviewStatus  status,
                                         const char         *note,
                                         const char         *mine);
/* TRUE when there was a note to remove. */
gboolean      efflux_review_remove_note (EffluxDossier *dossier,
                                         const char    *lobe);

/* The note on a lobe, or NULL. */
const EffluxReviewNote *efflux_review_find (const EffluxReview *review,
                                            const char         *lobe);

const char   *efflux_review_status_name (EffluxReviewStatus  status);
gboolean      efflux_review_status_from_string (const char         *text,
                                                EffluxReviewStatus *status);

G_DEFINE_AUTOPTR_CLEANUP_FUNC (EffluxReview, efflux_review_free)

G_END_DECLS
