/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "config.h"

#include "efflux-dossier.h"
#include "efflux-constants.h"
#include "efflux-io.h"

#include <glib/gstdio.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#define GROUP_SOURCE      "Source"
#define GROUP_ASSUMPTIONS "Assumptions"

/* ---------------------------------------------------------------------------------------------- */
/* small parsers: every failure names the file, the group and the key                               */

static gboolean
fail (GError     **error,
      const char  *file,
      const char  *group,
      const char  *key,
      const char  *format,
      ...) G_GNUC_PRINTF (5, 6);

static gboolean
fail (GError     **error,
      const char  *file,
      const char  *group,
      const char  *key,
      const char  *format,
      ...)
{
  va_list args;
  g_autofree char *msg = NULL;

  va_start (args, format);
  msg = g_strdup_vprintf (format, args);
  va_end (args);
  if (key != NULL)
    g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: [%s] %s: %s", file, group, key, msg);
  else
    g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: [%s]: %s", file, group, msg);
  return FALSE;
}

/* The raw value, stripped, or NULL when the key is absent. */
static char *
get_raw (GKeyFile   *kf,
         const char *group,
         const char *key)
{
  char *value = g_key_file_get_value (kf, group, key, NULL);

  if (value != NULL)
    g_strstrip (value);
  return value;
}

/* Parse one finite double covering the whole (stripped) text. */
static gboolean
parse_double (const char *text,
              double     *out)
{
  char *end = NULL;
  double v;

  if (text == NULL)
    return FALSE;
  while (g_ascii_isspace (*text))
    text++;
  if (*text == '\0')
    return FALSE;
  v = g_ascii_strtod (text, &end);
  if (end == text)
    return FALSE;
  while (g_ascii_isspace (*end))
    end++;
  if (*end != '\0' || !isfinite (v))
    return FALSE;
  *out = v;
  return TRUE;
}

typedef struct
{
  const char *file;
  GKeyFile   *kf;
} Ctx;

/* Read a number. Absent: required -> error, else *out = fallback. */
static gboolean
read_number (Ctx        *ctx,
             const char *group,
             const char *key,
             gboolean    required,
             double      fallback,
             double     *out,
             GError    **error)
{
  g_autofree char *raw = get_raw (ctx->kf, group, key);

  if (raw == NULL || (*raw == '\0' && !required))
    {
      if (required)
        return fail (error, ctx->file, group, key, "missing (a number is required)");
      *out = fallback;
      return TRUE;
    }
  if (!parse_double (raw, out))
    return fail (error, ctx->file, group, key, "expected a finite number, got '%s'", raw);
  return TRUE;
}

static gboolean
read_positive (Ctx        *ctx,
               const char *group,
               const char *key,
               gboolean    required,
               double      fallback,
               double     *out,
               GError    **error)
{
  if (!read_number (ctx, group, key, required, fallback, out, error))
    return FALSE;
  if (!(*out > 0))
    return fail (error, ctx->file, group, key, "must be positive, got %g", *out);
  return TRUE;
}

/* "A;B" -> two finite numbers; absent -> NaN, NaN (or error when required). */
static gboolean
read_pair (Ctx        *ctx,
           const char *group,
           const char *key,
           gboolean    required,
           const char *what,
           double      out[2],
           GError    **error)
{
  g_autofree char *raw = get_raw (ctx->kf, group, key);
  g_auto (GStrv) parts = NULL;

  out[0] = out[1] = NAN;
  if (raw == NULL || (*raw == '\0' && !required))
    {
      if (required)
        return fail (error, ctx->file, group, key, "missing (expected two numbers '%s')", what);
      return TRUE;
    }
  parts = g_strsplit (raw, ";", -1);
  if (g_strv_length (parts) != 2 || !parse_double (parts[0], &out[0]) || !parse_double (parts[1], &out[1]))
    return fail (error, ctx->file, group, key, "expected two numbers '%s', got '%s'", what, raw);
  return TRUE;
}

static gboolean
read_string (Ctx         *ctx,
             const char  *group,
             const char  *key,
             gboolean     required,
             char       **out,
             GError     **error)
{
  char *raw = get_raw (ctx->kf, group, key);

  if (required && (raw == NULL || *raw == '\0'))
    {
      g_free (raw);
      return fail (error, ctx->file, group, key, "missing (a value is required)");
    }
  *out = raw;
  return TRUE;
}

/* "ra,dec;ra,dec;..." -> vertices. */
static gboolean
read_vertices (Ctx         *ctx,
               const char  *group,
               const char  *key,
               gsize        min_vertices,
               double     **ra_out,
               double     **dec_out,
               gsize       *n_out,
               GError     **error)
{
  g_autofree char *raw = get_raw (ctx->kf, group, key);
  g_auto (GStrv) parts = NULL;
  g_autofree double *ra = NULL;
  g_autofree double *dec = NULL;
  gsize n = 0;

  if (raw == NULL || *raw == '\0')
    return fail (error, ctx->file, group, key, "missing (expected vertices 'RA,DEC;RA,DEC;...')");
  parts = g_strsplit (raw, ";", -1);
  /* a trailing ';' is tolerated */
  for (gsize i = 0; parts[i] != NULL; i++)
    {
      g_strstrip (parts[i]);
      if (parts[i][0] != '\0' || parts[i + 1] != NULL)
        n++;
    }
  ra = g_new0 (double, n + 1);
  dec = g_new0 (double, n + 1);
  for (gsize i = 0; i < n; i++)
    {
      g_auto (GStrv) xy = g_strsplit (parts[i], ",", -1);

      if (g_strv_length (xy) != 2 || !parse_double (xy[0], &ra[i]) || !parse_double (xy[1], &dec[i]))
        return fail (error, ctx->file, group, key,
                     "vertex %" G_GSIZE_FORMAT ": expected finite 'RA,DEC' in degrees, got '%s'",
                     i + 1, parts[i]);
      if (dec[i] < -90 || dec[i] > 90)
        return fail (error, ctx->file, group, key,
                     "vertex %" G_GSIZE_FORMAT ": declination %g is outside [-90, 90]", i + 1, dec[i]);
    }
  if (n > 10000)
    return fail (error, ctx->file, group, key, "more than 10000 vertices (%" G_GSIZE_FORMAT ")", n);
  if (n < min_vertices)
    return fail (error, ctx->file, group, key,
                 "needs at least %" G_GSIZE_FORMAT " vertices, got %" G_GSIZE_FORMAT,
                 min_vertices, n);
  *ra_out = g_steal_pointer (&ra);
  *dec_out = g_steal_pointer (&dec);
  *n_out = n;
  return TRUE;
}

/* ---------------------------------------------------------------------------------------------- */

static void
cube_free (gpointer p)
{
  EffluxDossierCube *c = p;

  g_free (c->id);
  g_free (c->path);
  g_free (c->abs_path);
  g_free (c->line_name);
  g_free (c);
}

static void
lobe_free (gpointer p)
{
  EffluxDossierLobe *l = p;

  g_free (l->name);
  g_free (l->cube_id);
  g_free (l->ra_deg);
  g_free (l->dec_deg);
  g_free (l->note);
  g_free (l->author);
  g_free (l);
}

static void
cut_free (gpointer p)
{
  EffluxDossierCut *c = p;

  g_free (c->name);
  g_free (c->cube_id);
  g_free (c->ra_deg);
  g_free (c->dec_deg);
  g_free (c);
}

void
efflux_dossier_free (EffluxDossier *d)
{
  if (d == NULL)
    return;
  g_free (d->path);
  g_free (d->dir);
  if (d->keyfile)
    g_key_file_unref (d->keyfile);
  g_free (d->name);
  g_clear_pointer (&d->cubes, g_ptr_array_unref);
  g_clear_pointer (&d->lobes, g_ptr_array_unref);
  g_clear_pointer (&d->cuts, g_ptr_array_unref);
  g_clear_pointer (&d->notes, g_ptr_array_unref);
  g_free (d);
}

const char *
efflux_inclination_mode_name (EffluxInclinationMode mode)
{
  switch (mode)
    {
    case EFFLUX_INCLINATION_NONE: return "none";
    case EFFLUX_INCLINATION_FIXED: return "fixed";
    case EFFLUX_INCLINATION_RANGE: return "range";
    case EFFLUX_INCLINATION_RANDOM: return "random";
    default: return "?";
    }
}

const char *
efflux_opacity_method_name (EffluxOpacityMethod method)
{
  switch (method)
    {
    case EFFLUX_OPACITY_NONE: return "none";
    case EFFLUX_OPACITY_FIXED: return "fixed";
    case EFFLUX_OPACITY_FROM_ISOTOPOLOGUE: return "from-isotopologue";
    default: return "?";
    }
}

const char *
efflux_lobe_kind_name (EffluxLobeKind kind)
{
  return kind == EFFLUX_LOBE_RED ? "red" : "blue";
}

EffluxDossierCube *
efflux_dossier_find_cube (const EffluxDossier *d,
                          const char          *id)
{
  for (guint i = 0; i < d->cubes->len; i++)
    {
      EffluxDossierCube *c = g_ptr_array_index (d->cubes, i);
      if (g_strcmp0 (c->id, id) == 0)
        return c;
    }
  return NULL;
}

EffluxDossierLobe *
efflux_dossier_find_lobe (const EffluxDossier *d,
                          const char          *name)
{
  for (guint i = 0; i < d->lobes->len; i++)
    {
      EffluxDossierLobe *l = g_ptr_array_index (d->lobes, i);
      if (g_strcmp0 (l->name, name) == 0)
        return l;
    }
  return NULL;
}

EffluxDossierCube *
efflux_dossier_isotopologue_cube (const EffluxDossier *d)
{
  for (guint i = 0; i < d->cubes->len; i++)
    {
      EffluxDossierCube *c = g_ptr_array_index (d->cubes, i);
      if (c->role == EFFLUX_CUBE_ROLE_ISOTOPOLOGUE)
        return c;
    }
  return NULL;
}

void
efflux_dossier_cube_set_line (EffluxDossierCube *cube,
                              const EffluxLine  *line)
{
  cube->line = line;
}

/* ---------------------------------------------------------------------------------------------- */

static gboolean
parse_source (EffluxDossier *d,
              Ctx           *ctx,
              GError       **error)
{
  const char *g = GROUP_SOURCE;
  g_autofree char *mode = NULL;

  if (!g_key_file_has_group (ctx->kf, g))
    return fail (error, ctx->file, g, NULL, "missing group");
  if (!read_string (ctx, g, "name", TRUE, &d->name, error) ||
      !read_number (ctx, g, "ra-deg", TRUE, 0, &d->ra_deg, error) ||
      !read_number (ctx, g, "dec-deg", TRUE, 0, &d->dec_deg, error) ||
      !read_positive (ctx, g, "distance-pc", TRUE, 0, &d->distance_pc, error) ||
      !read_number (ctx, g, "distance-err-pc", FALSE, 0, &d->distance_err_pc, error) ||
      !read_number (ctx, g, "vsys-kms", TRUE, 0, &d->vsys_kms, error))
    return FALSE;
  if (d->ra_deg < 0 || d->ra_deg >= 360)
    return fail (error, ctx->file, g, "ra-deg", "must lie in [0, 360), got %g", d->ra_deg);
  if (d->dec_deg < -90 || d->dec_deg > 90)
    return fail (error, ctx->file, g, "dec-deg", "must lie in [-90, 90], got %g", d->dec_deg);
  if (d->distance_err_pc < 0)
    return fail (error, ctx->file, g, "distance-err-pc", "must not be negative, got %g", d->distance_err_pc);

  d->inclination_deg = NAN;
  d->inclination_range_deg[0] = d->inclination_range_deg[1] = NAN;
  if (!read_string (ctx, g, "inclination-mode", FALSE, &mode, error))
    return FALSE;
  if (mode == NULL || *mode == '\0' || strcmp (mode, "none") == 0)
    d->inclination_mode = EFFLUX_INCLINATION_NONE;
  else if (strcmp (mode, "fixed") == 0)
    {
      d->inclination_mode = EFFLUX_INCLINATION_FIXED;
      if (!read_number (ctx, g, "inclination-deg", TRUE, 0, &d->inclination_deg, error))
        return FALSE;
      if (d->inclination_deg <= 0 || d->inclination_deg >= 90)
        return fail (error, ctx->file, g, "inclination-deg",
                     "must lie strictly between 0 and 90 with inclination-mode=fixed, got %g "
                     "(the correction diverges at 0 and 90)", d->inclination_deg);
    }
  else if (strcmp (mode, "range") == 0)
    {
      d->inclination_mode = EFFLUX_INCLINATION_RANGE;
      if (!read_pair (ctx, g, "inclination-range-deg", TRUE, "LO;HI", d->inclination_range_deg, error))
        return FALSE;
      if (!(d->inclination_range_deg[0] > 0 && d->inclination_range_deg[1] < 90 &&
            d->inclination_range_deg[0] < d->inclination_range_deg[1]))
        return fail (error, ctx->file, g, "inclination-range-deg",
                     "expected 0 < LO < HI < 90, got %g;%g",
                     d->inclination_range_deg[0], d->inclination_range_deg[1]);
    }
  else if (strcmp (mode, "random") == 0)
    d->inclination_mode = EFFLUX_INCLINATION_RANDOM;
  else
    return fail (error, ctx->file, g, "inclination-mode",
                 "expected none, fixed, range or random, got '%s'", mode);
  return TRUE;
}

static gboolean
check_range (Ctx        *ctx,
             const char *key,
             double      r[2],
             gboolean    positive,
             GError    **error)
{
  if (isnan (r[0]))
    return TRUE;
  if (r[0] > r[1])
    return fail (error, ctx->file, GROUP_ASSUMPTIONS, key, "LO %g is above HI %g", r[0], r[1]);
  if (positive && !(r[0] > 0))
    return fail (error, ctx->file, GROUP_ASSUMPTIONS, key, "must be positive, got %g;%g", r[0], r[1]);
  return TRUE;
}

static gboolean
parse_assumptions (EffluxDossier *d,
                   Ctx           *ctx,
                   GError       **error)
{
  const char *g = GROUP_ASSUMPTIONS;
  g_autofree char *opacity = NULL;
  double samples, seed;

  if (!g_key_file_has_group (ctx->kf, g))
    return fail (error, ctx->file, g, NULL, "missing group");
  if (!read_positive (ctx, g, "tex-k", TRUE, 0, &d->tex_k, error) ||
      !read_number (ctx, g, "tbg-k", FALSE, EFFLUX_TCMB, &d->tbg_k, error) ||
      !read_positive (ctx, g, "co-abundance", TRUE, 0, &d->co_abundance, error) ||
      !read_positive (ctx, g, "isotope-ratio", FALSE, 62.0, &d->isotope_ratio, error) ||
      !read_positive (ctx, g, "mass-per-h2", FALSE, 2.8, &d->mass_per_h2, error) ||
      !read_number (ctx, g, "clip-sigma", FALSE, 0, &d->clip_sigma, error) ||
      !read_pair (ctx, g, "tex-range-k", FALSE, "LO;HI", d->tex_range_k, error) ||
      !read_pair (ctx, g, "co-abundance-range", FALSE, "LO;HI", d->co_abundance_range, error) ||
      !read_pair (ctx, g, "isotope-ratio-range", FALSE, "LO;HI", d->isotope_ratio_range, error) ||
      !read_positive (ctx, g, "o18-ratio", FALSE, 560.0, &d->o18_ratio, error) ||
      !read_number (ctx, g, "sio-abundance", FALSE, NAN, &d->sio_abundance, error) ||
      !read_number (ctx, g, "mc-samples", FALSE, 2000, &samples, error) ||
      !read_number (ctx, g, "mc-seed", FALSE, 1, &seed, error))
    return FALSE;
  if (d->tbg_k < 0)
    return fail (error, ctx->file, g, "tbg-k", "must not be negative, got %g", d->tbg_k);
  if (d->tex_k <= d->tbg_k)
    return fail (error, ctx->file, g, "tex-k",
                 "T_ex = %g K is not above the background tbg-k = %g K", d->tex_k, d->tbg_k);
  if (!check_range (ctx, "tex-range-k", d->tex_range_k, TRUE, error) ||
      !check_range (ctx, "co-abundance-range", d->co_abundance_range, TRUE, error) ||
      !check_range (ctx, "isotope-ratio-range", d->isotope_ratio_range, TRUE, error))
    return FALSE;
  if (!isnan (d->tex_range_k[0]) && d->tex_range_k[0] <= d->tbg_k)
    return fail (error, ctx->file, g, "tex-range-k",
                 "LO = %g K is not above the background tbg-k = %g K", d->tex_range_k[0], d->tbg_k);
  if (!isnan (d->sio_abundance) && !(d->sio_abundance > 0))
    return fail (error, ctx->file, g, "sio-abundance", "must be positive, got %g", d->sio_abundance);
  if (d->clip_sigma < 0)
    return fail (error, ctx->file, g, "clip-sigma", "must not be negative, got %g", d->clip_sigma);
  if (samples < 0 || samples > 1000000 || samples != floor (samples))
    return fail (error, ctx->file, g, "mc-samples", "expected a whole number in [0, 1000000], got %g", samples);
  if (seed < 0 || seed > 9007199254740992.0 || seed != floor (seed))
    return fail (error, ctx->file, g, "mc-seed", "expected a whole non-negative number, got %g", seed);
  d->mc_samples = (guint) samples;
  d->mc_seed = (guint64) seed;

  if (!read_string (ctx, g, "opacity", FALSE, &opacity, error))
    return FALSE;
  d->tau = 0;
  if (opacity == NULL || *opacity == '\0' || strcmp (opacity, "none") == 0)
    d->opacity = EFFLUX_OPACITY_NONE;
  else if (strcmp (opacity, "fixed") == 0)
    {
      d->opacity = EFFLUX_OPACITY_FIXED;
      if (!read_number (ctx, g, "tau", TRUE, 0, &d->tau, error))
        return FALSE;
      if (d->tau < 0)
        return fail (error, ctx->file, g, "tau", "must not be negative, got %g", d->tau);
    }
  else if (strcmp (opacity, "from-isotopologue") == 0)
    d->opacity = EFFLUX_OPACITY_FROM_ISOTOPOLOGUE;
  else
    return fail (error, ctx->file, g, "opacity",
                 "expected none, fixed or from-isotopologue, got '%s'", opacity);
  return TRUE;
}

static gboolean
parse_cube (EffluxDossier *d,
            Ctx           *ctx,
            const char    *group,
            GError       **error)
{
  g_autoptr (GPtrArray) guard = g_ptr_array_new_with_free_func (cube_free);
  EffluxDossierCube *c = g_new0 (EffluxDossierCube, 1);
  g_autofree char *role = NULL;

  g_ptr_array_add (guard, c);
  c->id = g_strstrip (g_strdup (group + strlen ("Cube ")));
  if (*c->id == '\0')
    return fail (error, ctx->file, group, NULL, "the cube has no id (expected '[Cube ID]')");
  if (efflux_dossier_find_cube (d, c->id) != NULL)
    return fail (error, ctx->file, group, NULL, "a second cube with the id '%s'", c->id);
  if (!read_string (ctx, group, "path", TRUE, &c->path, error) ||
      !read_string (ctx, group, "line", FALSE, &c->line_name, error) ||
      !read_string (ctx, group, "role", FALSE, &role, error) ||
      !read_positive (ctx, group, "beam-efficiency", FALSE, 1.0, &c->beam_efficiency, error) ||
      !read_number (ctx, group, "rms-k", FALSE, NAN, &c->rms_k, error))
    return FALSE;
  if (c->beam_efficiency > 1.5)
    return fail (error, ctx->file, group, "beam-efficiency",
                 "expected a fraction in (0, 1], got %g", c->beam_efficiency);
  if (!isnan (c->rms_k) && !(c->rms_k > 0))
    return fail (error, ctx->file, group, "rms-k", "must be positive, got %g", c->rms_k);
  if (c->line_name != NULL && *c->line_name == '\0')
    g_clear_pointer (&c->line_name, g_free);
  if (c->line_name != NULL)
    {
      c->line = efflux_line_lookup (c->line_name);
      if (c->line == NULL)
        return fail (error, ctx->file, group, "line",
                     "unknown line '%s' (the catalogue knows e.g. '12CO 2-1', '13CO 1-0', 'C18O 2-1', 'SiO 5-4')",
                     c->line_name);
    }
  if (role == NULL || *role == '\0' || strcmp (role, "tracer") == 0)
    c->role = EFFLUX_CUBE_ROLE_TRACER;
  else if (strcmp (role, "isotopologue") == 0)
    c->role = EFFLUX_CUBE_ROLE_ISOTOPOLOGUE;
  else if (strcmp (role, "context") == 0)
    c->role = EFFLUX_CUBE_ROLE_CONTEXT;
  else
    return fail (error, ctx->file, group, "role",
                 "expected tracer, isotopologue or context, got '%s'", role);
  if (g_path_is_absolute (c->path))
    c->abs_path = g_strdup (c->path);
  else
    c->abs_path = g_build_filename (d->dir, c->path, NULL);
  g_ptr_array_add (d->cubes, g_ptr_array_steal_index (guard, 0));
  return TRUE;
}

/* Velocity range 'V1;V2'. */
static gboolean
parse_velocity (Ctx                *ctx,
                const char         *group,
                EffluxDossierLobe  *l,
                GError            **error)
{
  double r[2];

  if (!read_pair (ctx, group, "velocity-kms", TRUE, "V1;V2", r, error))
    return FALSE;
  if (r[0] == r[1])
    return fail (error, ctx->file, group, "velocity-kms", "the range %g;%g is empty", r[0], r[1]);
  l->v1_kms = MIN (r[0], r[1]);
  l->v2_kms = MAX (r[0], r[1]);
  return TRUE;
}

static gboolean
parse_lobe (EffluxDossier *d,
            Ctx           *ctx,
            const char    *group,
            GError       **error)
{
  g_autoptr (GPtrArray) guard = g_ptr_array_new_with_free_func (lobe_free);
  EffluxDossierLobe *l = g_new0 (EffluxDossierLobe, 1);
  g_autofree char *kind = NULL;

  g_ptr_array_add (guard, l);
  l->name = g_strstrip (g_strdup (group + strlen ("Lobe ")));
  if (*l->name == '\0')
    return fail (error, ctx->file, group, NULL, "the lobe has no name (expected '[Lobe NAME]')");
  if (strcmp (l->name, "total") == 0)
    return fail (error, ctx->file, group, NULL, "'total' is reserved for the sum row; rename the lobe");
  if (efflux_dossier_find_lobe (d, l->name) != NULL)
    return fail (error, ctx->file, group, NULL, "a second lobe named '%s'", l->name);
  if (!read_string (ctx, group, "kind", TRUE, &kind, error))
    return FALSE;
  if (strcmp (kind, "blue") == 0)
    l->kind = EFFLUX_LOBE_BLUE;
  else if (strcmp (kind, "red") == 0)
    l->kind = EFFLUX_LOBE_RED;
  else
    return fail (error, ctx->file, group, "kind", "expected blue or red, got '%s'", kind);
  if (!read_string (ctx, group, "cube", TRUE, &l->cube_id, error))
    return FALSE;
  if (efflux_dossier_find_cube (d, l->cube_id) == NULL)
    return fail (error, ctx->file, group, "cube", "no [Cube %s] in this dossier", l->cube_id);
  if (!read_vertices (ctx, group, "polygon", 3, &l->ra_deg, &l->dec_deg, &l->n_vertices, error) ||
      !parse_velocity (ctx, group, l, error) ||
      !read_string (ctx, group, "note", FALSE, &l->note, error) ||
      !read_string (ctx, group, "author", FALSE, &l->author, error))
    return FALSE;
  g_ptr_array_add (d->lobes, g_ptr_array_steal_index (guard, 0));
  return TRUE;
}

static gboolean
parse_cut (EffluxDossier *d,
           Ctx           *ctx,
           const char    *group,
           GError       **error)
{
  g_autoptr (GPtrArray) guard = g_ptr_array_new_with_free_func (cut_free);
  EffluxDossierCut *c = g_new0 (EffluxDossierCut, 1);

  g_ptr_array_add (guard, c);
  c->name = g_strstrip (g_strdup (group + strlen ("Cut ")));
  if (!read_string (ctx, group, "cube", TRUE, &c->cube_id, error))
    return FALSE;
  if (efflux_dossier_find_cube (d, c->cube_id) == NULL)
    return fail (error, ctx->file, group, "cube", "no [Cube %s] in this dossier", c->cube_id);
  if (!read_vertices (ctx, group, "path", 2, &c->ra_deg, &c->dec_deg, &c->n_vertices, error) ||
      !read_number (ctx, group, "width-arcsec", FALSE, 0, &c->width_arcsec, error))
    return FALSE;
  if (c->width_arcsec < 0)
    return fail (error, ctx->file, group, "width-arcsec", "must not be negative, got %g", c->width_arcsec);
  g_ptr_array_add (d->cuts, g_ptr_array_steal_index (guard, 0));
  return TRUE;
}

static gboolean
parse_all (EffluxDossier *d,
           GError       **error)
{
  Ctx ctx = { d->path, d->keyfile };
  g_auto (GStrv) groups = g_key_file_get_groups (d->keyfile, NULL);
  gboolean any_tracer_lobe = FALSE;

  if (!parse_source (d, &ctx, error) || !parse_assumptions (d, &ctx, error))
    return FALSE;
  /* cubes first, so lobes and cuts can name any of them */
  for (gsize i = 0; groups[i] != NULL; i++)
    if (g_str_has_prefix (groups[i], "Cube ") && !parse_cube (d, &ctx, groups[i], error))
      return FALSE;
  for (gsize i = 0; groups[i] != NULL; i++)
    {
      if (g_str_has_prefix (groups[i], "Lobe "))
        {
          if (!parse_lobe (d, &ctx, groups[i], error))
            return FALSE;
        }
      else if (g_str_has_prefix (groups[i], "Cut "))
        {
          if (!parse_cut (d, &ctx, groups[i], error))
            return FALSE;
        }
      else if (strcmp (groups[i], "Cube") == 0 || strcmp (groups[i], "Lobe") == 0 ||
               strcmp (groups[i], "Cut") == 0)
        return fail (error, ctx.file, groups[i], NULL, "expected '[%s NAME]'", groups[i]);
    }
  for (guint i = 0; i < d->lobes->len; i++)
    {
      EffluxDossierLobe *l = g_ptr_array_index (d->lobes, i);
      EffluxDossierCube *c = efflux_dossier_find_cube (d, l->cube_id);
      g_autofree char *group = g_strdup_printf ("Lobe %s", l->name);

      if (c->role != EFFLUX_CUBE_ROLE_ISOTOPOLOGUE)
        any_tracer_lobe = TRUE;
      if (c->line != NULL && c->line->species == EFFLUX_SPECIES_SIO && isnan (d->sio_abundance))
        return fail (error, ctx.file, GROUP_ASSUMPTIONS, "sio-abundance",
                     "missing: [Lobe %s] is measured on SiO", l->name);
      if (d->opacity == EFFLUX_OPACITY_FROM_ISOTOPOLOGUE && c->role == EFFLUX_CUBE_ROLE_ISOTOPOLOGUE)
        return fail (error, ctx.file, group, "cube",
                     "opacity=from-isotopologue needs the lobe on a tracer cube, but [Cube %s] is the isotopologue",
                     c->id);
    }
  (void) any_tracer_lobe;
  if (d->opacity == EFFLUX_OPACITY_FROM_ISOTOPOLOGUE && efflux_dossier_isotopologue_cube (d) == NULL)
    return fail (error, ctx.file, GROUP_ASSUMPTIONS, "opacity",
                 "from-isotopologue needs a [Cube ...] with role=isotopologue");
  return TRUE;
}

static EffluxDossier *
dossier_new (const char *display_name,
             const char *base_dir)
{
  EffluxDossier *d = g_new0 (EffluxDossier, 1);

  d->path = g_strdup (display_name);
  d->dir = g_strdup (base_dir ? base_dir : ".");
  d->keyfile = g_key_file_new ();
  g_key_file_set_list_separator (d->keyfile, ';');
  d->cubes = g_ptr_array_new_with_free_func (cube_free);
  d->lobes = g_ptr_array_new_with_free_func (lobe_free);
  d->cuts = g_ptr_array_new_with_free_func (cut_free);
  d->notes = g_ptr_array_new_with_free_func (g_free);
  return d;
}

EffluxDossier *
efflux_dossier_new_from_data (const char  *data,
                              gssize       length,
                              const char  *display_name,
                              const char  *base_dir,
                              GError     **error)
{
  g_autoptr (EffluxDossier) d = dossier_new (display_name, base_dir);
  g_autoptr (GError) local = NULL;

  if (length < 0)
    length = (gssize) strlen (data);
  if (!g_key_file_load_from_data (d->keyfile, data, (gsize) length, G_KEY_FILE_KEEP_COMMENTS, &local))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: not a key file: %s",
                   display_name, local->message);
      return NULL;
    }
  if (!parse_all (d, error))
    return NULL;
  return g_steal_pointer (&d);
}

EffluxDossier *
efflux_dossier_load (const char  *path,
                     GError     **error)
{
  g_autofree char *data = NULL;
  g_autofree char *dir = NULL;
  gsize length = 0;
  g_autoptr (GError) local = NULL;

  if (!g_file_get_contents (path, &data, &length, &local))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_IO, "%s: cannot read: %s", path, local->message);
      return NULL;
    }
  if (!g_utf8_validate (data, (gssize) length, NULL))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: not UTF-8 text", path);
      return NULL;
    }
  dir = g_path_get_dirname (path);
  return efflux_dossier_new_from_data (data, (gssize) length, path, dir, error);
}

char *
efflux_dossier_to_data (EffluxDossier *d,
                        gsize         *length)
{
  return g_key_file_to_data (d->keyfile, length, NULL);
}

gboolean
efflux_dossier_save (EffluxDossier  *d,
                     const char     *path,
                     GError        **error)
{
  gsize length = 0;
  g_autofree char *data = efflux_dossier_to_data (d, &length);

  return efflux_write_file_atomic (path ? path : d->path, data, (gssize) length, error);
}

/* ---------------------------------------------------------------------------------------------- */
/* setters                                                                                          */

static void
set_double (GKeyFile   *kf,
            const char *group,
            const char *key,
            double      value)
{
  char buf[G_ASCII_DTOSTR_BUF_SIZE];

  g_key_file_set_value (kf, group, key, g_ascii_formatd (buf, sizeof buf, "%.10g", value));
}

gboolean
efflux_dossier_set_distance (EffluxDossier *d,
                             double         distance_pc,
                             GError       **error)
{
  if (!(isfinite (distance_pc) && distance_pc > 0))
    return fail (error, d->path, GROUP_SOURCE, "distance-pc", "must be positive, got %g", distance_pc);
  d->distance_pc = distance_pc;
  set_double (d->keyfile, GROUP_SOURCE, "distance-pc", distance_pc);
  return TRUE;
}

gboolean
efflux_dossier_set_vsys (EffluxDossier *d,
                         double         vsys_kms,
                         GError       **error)
{
  if (!isfinite (vsys_kms))
    return fail (error, d->path, GROUP_SOURCE, "vsys-kms", "expected a finite number");
  d->vsys_kms = vsys_kms;
  set_double (d->keyfile, GROUP_SOURCE, "vsys-kms", vsys_kms);
  return TRUE;
}

gboolean
efflux_dossier_set_tex (EffluxDossier *d,
                        double         tex_k,
                        GError       **error)
{
  if (!(isfinite (tex_k) && tex_k > d->tbg_k))
    return fail (error, d->path, GROUP_ASSUMPTIONS, "tex-k",
                 "T_ex = %g K is not above the background tbg-k = %g K", tex_k, d->tbg_k);
  d->tex_k = tex_k;
  set_double (d->keyfile, GROUP_ASSUMPTIONS, "tex-k", tex_k);
  return TRUE;
}

gboolean
efflux_dossier_set_lobe_velocity (EffluxDossier *d,
                                  const char    *lobe,
                                  double         v1_kms,
                                  double         v2_kms,
                                  GError       **error)
{
  EffluxDossierLobe *l = efflux_dossier_find_lobe (d, lobe);
  g_autofree char *group = g_strdup_printf ("Lobe %s", lobe);
  char a[G_ASCII_DTOSTR_BUF_SIZE], b[G_ASCII_DTOSTR_BUF_SIZE];
  g_autofree char *value = NULL;

  if (l == NULL)
    return fail (error, d->path, group, NULL, "no such lobe");
  if (!isfinite (v1_kms) || !isfinite (v2_kms) || v1_kms == v2_kms)
    return fail (error, d->path, group, "velocity-kms", "the range %g;%g is empty or not finite", v1_kms, v2_kms);
  l->v1_kms = MIN (v1_kms, v2_kms);
  l->v2_kms = MAX (v1_kms, v2_kms);
  g_ascii_formatd (a, sizeof a, "%.10g", l->v1_kms);
  g_ascii_formatd (b, sizeof b, "%.10g", l->v2_kms);
  value = g_strdup_printf ("%s;%s", a, b);
  g_key_file_set_value (d->keyfile, group, "velocity-kms", value);
  return TRUE;
}

gboolean
efflux_dossier_set_lobe_polygon (EffluxDossier *d,
                                 const char    *lobe,
                                 const double  *ra_deg,
                                 const double  *dec_deg,
                                 gsize          n_vertices,
                                 GError       **error)
{
  EffluxDossierLobe *l = efflux_dossier_find_lobe (d, lobe);
  g_autofree char *group = g_strdup_printf ("Lobe %s", lobe);
  g_autoptr (GString) s = g_string_new (NULL);

  if (l == NULL)
    return fail (error, d->path, group, NULL, "no such lobe");
  if (n_vertices < 3)
    return fail (error, d->path, group, "polygon",
                 "needs at least 3 vertices, got %" G_GSIZE_FORMAT, n_vertices);
  for (gsize i = 0; i < n_vertices; i++)
    {
      char a[G_ASCII_DTOSTR_BUF_SIZE], b[G_ASCII_DTOSTR_BUF_SIZE];

      if (!isfinite (ra_deg[i]) || !isfinite (dec_deg[i]))
        return fail (error, d->path, group, "polygon", "vertex %" G_GSIZE_FORMAT " is not finite", i + 1);
      g_string_append_printf (s, "%s%s,%s", i ? ";" : "",
                              g_ascii_formatd (a, sizeof a, "%.8f", ra_deg[i]),
                              g_ascii_formatd (b, sizeof b, "%.8f", dec_deg[i]));
    }
  g_free (l->ra_deg);
  g_free (l->dec_deg);
  l->ra_deg = g_memdup2 (ra_deg, n_vertices * sizeof (double));
  l->dec_deg = g_memdup2 (dec_deg, n_vertices * sizeof (double));
  l->n_vertices = n_vertices;
  g_key_file_set_value (d->keyfile, group, "polygon", s->str);
  return TRUE;
}

/* ---------------------------------------------------------------------------------------------- */
/* Lobe authors and notes (added for review). */

static char *
one_line (const char *text)
{
  char *s = g_strdup (text != NULL ? text : "");

  for (char *p = s; *p != '\0'; p++)
    if (*p == '\n' || *p == '\r')
      *p = ' ';
  return g_strstrip (s);
}

gboolean
efflux_dossier_set_lobe_author (EffluxDossier *d,
                                const char    *lobe,
                                const char    *author,
                                GError       **error)
{
  EffluxDossierLobe *l = efflux_dossier_find_lobe (d, lobe);
  g_autofree char *group = g_strdup_printf ("Lobe %s", lobe);

  if (l == NULL)
    return fail (error, d->path, group, NULL, "no such lobe");
  g_free (l->author);
  l->author = one_line (author);
  g_key_file_set_value (d->keyfile, group, "author", l->author);
  return TRUE;
}

gboolean
efflux_dossier_set_lobe_note (EffluxDossier *d,
                              const char    *lobe,
                              const char    *note,
                              GError       **error)
{
  EffluxDossierLobe *l = efflux_dossier_find_lobe (d, lobe);
  g_autofree char *group = g_strdup_printf ("Lobe %s", lobe);

  if (l == NULL)
    return fail (error, d->path, group, NULL, "no such lobe");
  g_free (l->note);
  l->note = one_line (note);
  g_key_file_set_value (d->keyfile, group, "note", l->note);
  return TRUE;
}

const char *
efflux_dossier_author (const EffluxDossier *d)
{
  for (guint i = 0; i < d->lobes->len; i++)
    {
      const EffluxDossierLobe *l = g_ptr_array_index (d->lobes, i);

      if (l->author != NULL && l->author[0] != '\0')
        return l->author;
    }
  return NULL;
}

double *
efflux_dossier_cut_path (const EffluxDossierCut *cut)
{
  double *ra_dec;

  g_return_val_if_fail (cut != NULL, NULL);
  ra_dec = g_new (double, 2 * cut->n_vertices);
  for (gsize i = 0; i < cut->n_vertices; i++)
    {
      ra_dec[2 * i] = cut->ra_deg[i];
      ra_dec[2 * i + 1] = cut->dec_deg[i];
    }
  return ra_dec;
}

/* ---------------------------------------------------------------------------------------------- */
/* Save As: the dossier at a new place, its file paths still naming the same files                 */

/* An absolute, lexically clean form of path (relative paths against the working directory). */
static char *
absolute_path (const char *path)
{
  return g_canonicalize_filename (path, NULL);
}

/* The physical form of an absolute path: the deepest existing ancestor resolved through its
 * symbolic links (realpath), the rest appended as written. */
static char *
physical_path (const char *abs)
{
  g_autofree char *head = g_strdup (abs);
  g_autoptr (GString) tail = g_string_new (NULL);

  for (;;)
    {
      g_autofree char *real = realpath (head, NULL);
      g_autofree char *base = NULL;
      char *slash;

      if (real != NULL)
        {
          if (tail->len == 0)
            return g_steal_pointer (&real);
          return g_build_filename (real, tail->str, NULL);
        }
      slash = strrchr (head, G_DIR_SEPARATOR);
      if (slash == NULL || slash == head)
        return g_strdup (abs);
      base = g_strdup (slash + 1);
      *slash = '\0';
      if (tail->len > 0)
        g_string_prepend_c (tail, G_DIR_SEPARATOR);
      g_string_prepend (tail, base);
    }
}

/* The device of the deepest existing ancestor of an absolute path (0 when none). */
static dev_t
path_device (const char *abs)
{
  g_autofree char *p = g_strdup (abs);

  for (;;)
    {
      GStatBuf st;
      char *slash;

      if (g_stat (p, &st) == 0)
        return st.st_dev;
      slash = strrchr (p, G_DIR_SEPARATOR);
      if (slash == NULL)
        return 0;
      if (slash == p)
        {
          p[1] = '\0';
          return g_stat (p, &st) == 0 ? st.st_dev : 0;
        }
      *slash = '\0';
    }
}

static gboolean
same_directory (const char *a,
                const char *b)
{
  GStatBuf sa, sb;

  if (g_strcmp0 (a, b) == 0)
    return TRUE;
  return g_stat (a, &sa) == 0 && g_stat (b, &sb) == 0 && sa.st_dev == sb.st_dev
         && sa.st_ino == sb.st_ino;
}

char *
efflux_dossier_relocate_path (const char *value,
                              const char *from_dir,
                              const char *to_dir)
{
  g_autofree char *from = NULL;
  g_autofree char *to = NULL;
  g_autofree char *target = NULL;
  g_auto (GStrv) to_parts = NULL;
  g_auto (GStrv) target_parts = NULL;
  g_autoptr (GString) rel = NULL;
  guint common = 0, n_to, n_target;

  g_return_val_if_fail (value != NULL && from_dir != NULL && to_dir != NULL, NULL);

  if (*value == '\0' || g_path_is_absolute (value))
    return g_strdup (value);
  from = absolute_path (from_dir);
  to = absolute_path (to_dir);
  /* the same directory (also through a link): the path as the user wrote it */
  if (same_directory (from, to))
    return g_strdup (value);
  {
    g_autofree char *physical_from = physical_path (from);
    g_autofree char *through = g_canonicalize_filename (value, physical_from);

    /* ".." in the value steps up from the physical directory (where the kernel starts too) */
    target = physical_path (through);
  }
  {
    g_autofree char *physical_to = physical_path (to);

    g_free (to);
    to = g_steal_pointer (&physical_to);
  }
  /* another file system (a mount): an absolute path, since the two need not travel together */
  if (path_device (to) != path_device (target))
    return g_steal_pointer (&target);
  to_parts = g_strsplit (to + 1, G_DIR_SEPARATOR_S, -1);
  target_parts = g_strsplit (target + 1, G_DIR_SEPARATOR_S, -1);
  n_to = g_strv_length (to_parts);
  n_target = g_strv_length (target_parts);
  /* "/" splits to one empty part */
  if (n_to == 1 && *to_parts[0] == '\0')
    n_to = 0;
  while (common < n_to && common + 1 < n_target && g_str_equal (to_parts[common], target_parts[common]))
    common++;
  /* nothing in common but the root: absolute (a relative path up to / and down again says less) */
  if (common == 0)
    return g_steal_pointer (&target);
  rel = g_string_new (NULL);
  for (guint i = common; i < n_to; i++)
    g_string_append (rel, ".." G_DIR_SEPARATOR_S);
  for (guint i = common; i < n_target; i++)
    {
      g_string_append (rel, target_parts[i]);
      if (i + 1 < n_target)
        g_string_append_c (rel, G_DIR_SEPARATOR);
    }
  return g_string_free (g_steal_pointer (&rel), FALSE);
}

/* The groups and keys that name files, relative to the dossier: [Cube ID] path and [Review]
 * reviewed. ([Cut ID] path is a list of sky positions, not a file.) */
static gboolean
is_file_key (const char *group,
             const char *key)
{
  return (g_str_has_prefix (group, "Cube ") && g_str_equal (key, "path"))
         || (g_str_equal (group, "Review") && g_str_equal (key, "reviewed"));
}

gboolean
efflux_dossier_is_file_key (const char *group,
                            const char *key)
{
  g_return_val_if_fail (group != NULL && key != NULL, FALSE);
  return is_file_key (group, key);
}

gboolean
efflux_dossier_save_as (EffluxDossier  *d,
                        const char     *path,
                        GError        **error)
{
  g_autofree char *dir_name = NULL;
  g_autofree char *new_dir = NULL;
  g_autofree char *old_dir = NULL;
  g_autofree char *data = NULL;
  g_autoptr (GKeyFile) kf = g_key_file_new ();
  g_auto (GStrv) groups = NULL;
  gsize length = 0;

  g_return_val_if_fail (d != NULL && path != NULL, FALSE);

  dir_name = g_path_get_dirname (path);
  new_dir = absolute_path (dir_name);
  old_dir = absolute_path (d->dir != NULL ? d->dir : ".");
  data = efflux_dossier_to_data (d, &length);
  g_key_file_set_list_separator (kf, ';');
  if (!g_key_file_load_from_data (kf, data, length, G_KEY_FILE_KEEP_COMMENTS, NULL))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: cannot copy the dossier's key file",
                   d->path);
      return FALSE;
    }
  groups = g_key_file_get_groups (kf, NULL);
  for (gsize g = 0; groups[g] != NULL; g++)
    {
      g_auto (GStrv) keys = g_key_file_get_keys (kf, groups[g], NULL, NULL);

      for (gsize k = 0; keys != NULL && keys[k] != NULL; k++)
        {
          g_autofree char *value = NULL;
          g_autofree char *moved = NULL;

          if (!is_file_key (groups[g], keys[k]))
            continue;
          value = g_strstrip (g_key_file_get_value (kf, groups[g], keys[k], NULL));
          moved = efflux_dossier_relocate_path (value, old_dir, new_dir);
          if (!g_str_equal (moved, value))
            g_key_file_set_value (kf, groups[g], keys[k], moved);
        }
    }
  g_clear_pointer (&data, g_free);
  data = g_key_file_to_data (kf, &length, NULL);
  if (!efflux_write_file_atomic (path, data, (gssize) length, error))
    return FALSE;

  /* written: the dossier is now the one at path */
  g_key_file_unref (d->keyfile);
  d->keyfile = g_steal_pointer (&kf);
  g_free (d->path);
  d->path = g_strdup (path);
  g_free (d->dir);
  d->dir = g_steal_pointer (&new_dir);
  for (guint i = 0; i < d->cubes->len; i++)
    {
      EffluxDossierCube *c = g_ptr_array_index (d->cubes, i);
      g_autofree char *group = g_strconcat ("Cube ", c->id, NULL);
      char *value = get_raw (d->keyfile, group, "path");

      if (value == NULL)
        continue;
      g_free (c->path);
      c->path = value;
      g_free (c->abs_path);
      c->abs_path = g_path_is_absolute (c->path) ? g_strdup (c->path)
                                                 : g_build_filename (d->dir, c->path, NULL);
    }
  return TRUE;
}
