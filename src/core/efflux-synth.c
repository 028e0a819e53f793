/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Synthetic outflow cubes: an invented protostar, its bipolar outflow, an ambient cloud and an SiO
 * jet, seen through LTE radiative transfer, a Gaussian beam and noise. The recipe format is ours
 * and documented in sample-data/README.md.
 *
 * The model (all choices are ours; the physics is textbook):
 *
 * - Geometry. The source sits at the map centre (the reference pixel of a TAN grid). The outflow
 *   axis makes the angle i with the line of sight (0 = pole-on). The blue lobe points towards the
 *   observer along position angle PA (east of north) on the sky, the red lobe along PA + 180.
 *   A point at true distance r from the source along the axis is seen at the projected offset
 *   r sin i; a gas speed V along the axis is seen as the line-of-sight velocity V cos i (blue:
 *   v = vsys - V cos i, red: v = vsys + V cos i).
 *
 * - Lobes. Each lobe is a Hubble-law flow: V proportional to r, r = V t0 with t0 = length / vmax
 *   (true length and speed). Its mass follows the power law dM/dV = A V^-gamma between vmin and vmax
 *   (true speeds). The mass of a channel is the exact integral of dM/dV over the speeds whose
 *   line-of-sight velocities fall in the channel; it is assigned to the channel-centre velocity, so
 *   the truth per channel is exact. In space, the mass of a channel fills the stretch of the axis
 *   that its speeds map to (r from V_lo t0 to V_hi t0) across the full width of the cone there
 *   (half-width r tan(half-opening)), uniformly per unit projected area (each pixel's share from
 *   5 x 5 sub-samples, normalised so that the channel's mass is kept exactly).
 *
 * - Ambient cloud: a Gaussian line at vsys (given FWHM) with a circular Gaussian spatial profile
 *   centred on the source, both normalised over the grid so that the given mass is what the cube
 *   holds.
 *
 * - SiO jet: knots of given ages on both sides, each at the true distance v_jet x age along the
 *   axis, Gaussian along the axis and across it, with a Gaussian line at vsys -/+ v_jet cos i.
 *
 * - Radiative transfer, per voxel and per isotopologue with its own line data (efflux-lte): the
 *   H2 column gives the 12CO column through the abundance, 13CO through the 12C/13C ratio, C18O
 *   through 16O/18O, SiO through its own abundance (jet gas only). tau = efflux_lte_tau at T_ex over
 *   one channel width and T = efflux_lte_brightness (T_bg). The 12CO/13CO brightness ratio thus
 *   carries the true opacity.
 *
 * - Then, as a telescope does: the beam (a normalised separable Gaussian per channel on the
 *   brightness, zero outside the map), then uncorrelated Gaussian noise from a seeded GRand. The
 *   cube is written in K or Jy/beam (efflux_fits_write_cube converts with efflux_jy_beam_to_k at each
 *   channel's frequency). */

#include "efflux-synth.h"
#include "efflux-constants.h"
#include "efflux-fitsout.h"
#include "efflux-io.h"
#include "efflux-lte.h"

#include <errno.h>
#include <glib/gstdio.h>
#include <math.h>
#include <string.h>

#define FWHM_PER_SIGMA 2.3548200450309493   /* 2 sqrt(2 ln 2) */
#define SUBSAMPLE 5

typedef struct
{
  char    *name;            /* NAME of [Lobe NAME] */
  gboolean red;
  double   mass_msun;
  double   length_au;       /* true length along the axis */
  double   vmin_kms, vmax_kms;  /* true speeds along the axis */
  double   gamma;
  double   half_opening_deg;
  gboolean shell;           /* shape=shell: a wind-driven shell (see build_shell) */
  double   shell_c;         /* z = C R^2, C in 1/arcsec (lengths in arcsec at the distance) */
} SynthLobe;

typedef struct
{
  gboolean red;
  double   age_yr;
} SynthKnot;

typedef struct
{
  char             *id;
  const EffluxLine *line;
  char             *file;
  gboolean          jy_per_beam;
  gboolean          freq;
  double            rms_k;
} SynthCubeSpec;

struct _EffluxSynthRecipe
{
  char     *path;
  char     *name;
  guint64   seed;

  char     *source_name;
  char     *cloud;
  double    ra_deg, dec_deg, distance_pc, vsys_kms, incl_deg, pa_deg;

  gsize     nx, ny, nchan;
  double    pixel_arcsec, vstart_kms, dv_kms;
  double    bmaj, bmin, bpa;
  gboolean  convolve;

  double    tex_k, tbg_k, co_abundance, isotope_ratio, c18o_ratio, mass_per_h2;

  double    amb_mass_msun, amb_fwhm_kms, amb_size_arcsec, amb_exclude_kms;

  GPtrArray *lobes;   /* SynthLobe */

  gboolean  has_jet;
  double    jet_speed_kms, sio_abundance, jet_width_arcsec, knot_length_arcsec, knot_fwhm_kms,
            knot_mass_msun;
  GArray   *knots;    /* SynthKnot */

  GPtrArray *cubes;   /* SynthCubeSpec */
};

/* ------------------------------------------------------------------------------------------ */
/* Recipe parsing */

static void
lobe_free (gpointer p)
{
  SynthLobe *lobe = p;
  g_free (lobe->name);
  g_free (lobe);
}

static void
cube_spec_free (gpointer p)
{
  SynthCubeSpec *c = p;
  g_free (c->id);
  g_free (c->file);
  g_free (c);
}

void
efflux_synth_recipe_free (EffluxSynthRecipe *recipe)
{
  if (recipe == NULL)
    return;
  g_free (recipe->path);
  g_free (recipe->name);
  g_free (recipe->source_name);
  g_free (recipe->cloud);
  if (recipe->lobes != NULL)
    g_ptr_array_unref (recipe->lobes);
  if (recipe->knots != NULL)
    g_array_unref (recipe->knots);
  if (recipe->cubes != NULL)
    g_ptr_array_unref (recipe->cubes);
  g_free (recipe);
}

typedef struct
{
  GKeyFile   *kf;
  const char *file;
  GError    **error;
  gboolean    failed;
} Reader;

static void G_GNUC_PRINTF (4, 5)
fail (Reader     *r,
      const char *group,
      const char *key,
      const char *format,
      ...)
{
  va_list args;
  g_autofree char *msg = NULL;

  if (r->failed)
    return;
  r->failed = TRUE;
  va_start (args, format);
  msg = g_strdup_vprintf (format, args);
  va_end (args);
  if (key != NULL)
    g_set_error (r->error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: [%s] %s: %s", r->file, group, key, msg);
  else
    g_set_error (r->error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: [%s]: %s", r->file, group, msg);
}

/* The raw value, or NULL (with an error when required). */
static char *
get_value (Reader     *r,
           const char *group,
           const char *key,
           gboolean    required)
{
  char *value;

  if (r->failed)
    return NULL;
  value = g_key_file_get_value (r->kf, group, key, NULL);
  if (value != NULL)
    g_strstrip (value);
  if ((value == NULL || *value == '\0') && required)
    fail (r, group, key, "missing");
  if (value != NULL && *value == '\0')
    g_clear_pointer (&value, g_free);
  return value;
}

static gboolean
parse_number (const char *text,
              double     *out)
{
  char *end = NULL;
  double v;

  errno = 0;
  v = g_ascii_strtod (text, &end);
  if (end == text || *end != '\0' || errno == ERANGE || !isfinite (v))
    return FALSE;
  *out = v;
  return TRUE;
}

static double
get_double (Reader     *r,
            const char *group,
            const char *key,
            gboolean    required,
            double      fallback)
{
  g_autofree char *value = get_value (r, group, key, required);
  double v;

  if (value == NULL)
    return fallback;
  if (!parse_number (value, &v))
    {
      fail (r, group, key, "'%s' is not a finite number", value);
      return fallback;
    }
  return v;
}

/* A number in (lo, hi) with open or closed ends. */
static double
get_ranged (Reader     *r,
            const char *group,
            const char *key,
            gboolean    required,
            double      fallback,
            double      lo,
            gboolean    lo_open,
            double      hi,
            gboolean    hi_open)
{
  double v = get_double (r, group, key, required, fallback);

  if (r->failed)
    return v;
  if ((lo_open ? !(v > lo) : !(v >= lo)) || (hi_open ? !(v < hi) : !(v <= hi)))
    {
      if (isinf (hi) && lo == 0.0)
        fail (r, group, key, "must be %s (got %g)", lo_open ? "positive" : "zero or positive", v);
      else
        fail (r, group, key, "must lie in %s%g, %g%s (got %g)", lo_open ? "(" : "[", lo, hi,
              hi_open ? ")" : "]", v);
    }
  return v;
}

static gsize
get_size (Reader     *r,
          const char *group,
          const char *key,
          gsize       lo,
          gsize       hi)
{
  g_autofree char *value = get_value (r, group, key, TRUE);
  guint64 v = 0;

  if (value == NULL)
    return 0;
  if (!g_ascii_string_to_unsigned (value, 10, lo, hi, &v, NULL))
    {
      fail (r, group, key, "'%s' is not a whole number in [%" G_GSIZE_FORMAT ", %" G_GSIZE_FORMAT "]",
            value, lo, hi);
      return 0;
    }
  return (gsize) v;
}

static char *
get_string (Reader     *r,
            const char *group,
            const char *key,
            gboolean    required,
            const char *fallback)
{
  char *value = get_value (r, group, key, required);

  if (value == NULL && !r->failed && fallback != NULL)
    return g_strdup (fallback);
  return value;
}

static gboolean
get_bool (Reader     *r,
          const char *group,
          const char *key,
          gboolean    fallback)
{
  g_autofree char *value = get_value (r, group, key, FALSE);

  if (value == NULL)
    return fallback;
  if (g_ascii_strcasecmp (value, "true") == 0)
    return TRUE;
  if (g_ascii_strcasecmp (value, "false") == 0)
    return FALSE;
  fail (r, group, key, "'%s' is neither true nor false", value);
  return fallback;
}

/* A ';'-separated list of numbers; empty or absent gives an empty array. */
static GArray *
get_double_list (Reader     *r,
                 const char *group,
                 const char *key,
                 gboolean    required)
{
  g_autofree char *value = get_value (r, group, key, required);
  GArray *out = g_array_new (FALSE, FALSE, sizeof (double));
  g_auto (GStrv) parts = NULL;

  if (value == NULL)
    return out;
  parts = g_strsplit (value, ";", -1);
  for (gsize i = 0; parts[i] != NULL; i++)
    {
      double v;
      g_strstrip (parts[i]);
      if (*parts[i] == '\0' && parts[i + 1] == NULL)
        break;   /* a trailing ';' */
      if (!parse_number (parts[i], &v))
        {
          fail (r, group, key, "item %" G_GSIZE_FORMAT " '%s' is not a finite number", i + 1, parts[i]);
          break;
        }
      g_array_append_val (out, v);
    }
  return out;
}

/* Refuse keys the format does not have: a misspelt key must not fall back silently. */
static void
check_keys (Reader             *r,
            const char         *group,
            const char * const *known)
{
  g_auto (GStrv) keys = g_key_file_get_keys (r->kf, group, NULL, NULL);

  for (gsize i = 0; keys != NULL && keys[i] != NULL && !r->failed; i++)
    if (!g_strv_contains (known, keys[i]))
      fail (r, group, keys[i], "unknown key (see sample-data/README.md for the recipe keys)");
}

static const char * const recipe_keys[] = { "name", "seed", NULL };
static const char * const source_keys[] = { "name", "cloud", "ra-deg", "dec-deg", "distance-pc",
                                            "vsys-kms", "inclination-deg", "position-angle-deg", NULL };
static const char * const grid_keys[] = { "nx", "ny", "pixel-arcsec", "nchan", "vstart-kms", "dv-kms",
                                          "beam-arcsec", "convolve", NULL };
static const char * const physics_keys[] = { "tex-k", "tbg-k", "co-abundance", "isotope-ratio",
                                             "c18o-ratio", "mass-per-h2", NULL };
static const char * const ambient_keys[] = { "mass-msun", "fwhm-kms", "size-fwhm-arcsec",
                                             "exclude-kms", NULL };
static const char * const lobe_keys[] = { "kind", "mass-msun", "length-au", "vmin-kms", "vmax-kms",
                                          "gamma", "half-opening-deg", "shape", "shell-c-per-arcsec",
                                          NULL };
static const char * const jet_keys[] = { "speed-kms", "sio-abundance", "width-arcsec",
                                         "knot-length-arcsec", "knot-fwhm-kms", "knot-mass-msun",
                                         "blue-knot-ages-yr", "red-knot-ages-yr", NULL };
static const char * const cube_keys[] = { "line", "file", "unit", "spectral", "rms-k", NULL };

static gboolean
safe_file_name (const char *name)
{
  if (name == NULL || *name == '\0' || strcmp (name, ".") == 0 || strcmp (name, "..") == 0)
    return FALSE;
  for (const char *p = name; *p; p++)
    if (*p == '/' || *p == '\\' || (unsigned char) *p < 0x20)
      return FALSE;
  return TRUE;
}

static void
parse_recipe (Reader            *r,
              EffluxSynthRecipe *rc)
{
  g_auto (GStrv) groups = g_key_file_get_groups (r->kf, NULL);
  g_autofree char *seed = NULL;
  g_autofree char *kind = NULL;

  /* every group must be one the format knows */
  for (gsize i = 0; groups[i] != NULL && !r->failed; i++)
    {
      const char *g = groups[i];
      if (strcmp (g, "Recipe") != 0 && strcmp (g, "Source") != 0 && strcmp (g, "Grid") != 0 &&
          strcmp (g, "Physics") != 0 && strcmp (g, "Ambient") != 0 && strcmp (g, "Jet") != 0 &&
          !g_str_has_prefix (g, "Lobe ") && !g_str_has_prefix (g, "Cube "))
        fail (r, g, NULL, "unknown group (see sample-data/README.md for the recipe format)");
    }

  check_keys (r, "Recipe", recipe_keys);
  rc->name = get_string (r, "Recipe", "name", TRUE, NULL);
  if (!r->failed && !safe_file_name (rc->name))
    fail (r, "Recipe", "name", "'%s' cannot be a file name", rc->name);
  seed = get_value (r, "Recipe", "seed", TRUE);
  if (seed != NULL && !g_ascii_string_to_unsigned (seed, 10, 0, G_MAXUINT64, &rc->seed, NULL))
    fail (r, "Recipe", "seed", "'%s' is not a whole number >= 0", seed);

  check_keys (r, "Source", source_keys);
  rc->source_name = get_string (r, "Source", "name", TRUE, NULL);
  rc->cloud = get_string (r, "Source", "cloud", FALSE, "");
  rc->ra_deg = get_ranged (r, "Source", "ra-deg", TRUE, 0, 0, FALSE, 360, TRUE);
  rc->dec_deg = get_ranged (r, "Source", "dec-deg", TRUE, 0, -89, FALSE, 89, FALSE);
  rc->distance_pc = get_ranged (r, "Source", "distance-pc", TRUE, 0, 0, TRUE, INFINITY, FALSE);
  rc->vsys_kms = get_double (r, "Source", "vsys-kms", TRUE, 0);
  rc->incl_deg = get_ranged (r, "Source", "inclination-deg", TRUE, 0, 0, TRUE, 90, TRUE);
  rc->pa_deg = get_double (r, "Source", "position-angle-deg", TRUE, 0);

  check_keys (r, "Grid", grid_keys);
  rc->nx = get_size (r, "Grid", "nx", 3, 8192);
  rc->ny = get_size (r, "Grid", "ny", 3, 8192);
  rc->nchan = get_size (r, "Grid", "nchan", 1, 65536);
  rc->pixel_arcsec = get_ranged (r, "Grid", "pixel-arcsec", TRUE, 0, 0, TRUE, 3600, FALSE);
  rc->vstart_kms = get_double (r, "Grid", "vstart-kms", TRUE, 0);
  rc->dv_kms = get_double (r, "Grid", "dv-kms", TRUE, 0);
  if (!r->failed && !(rc->dv_kms != 0.0))
    fail (r, "Grid", "dv-kms", "the channel step must not be 0");
  if (!r->failed)
    {
      g_autoptr (GArray) beam = get_double_list (r, "Grid", "beam-arcsec", TRUE);
      if (!r->failed && (beam->len < 1 || beam->len > 3))
        fail (r, "Grid", "beam-arcsec", "give BMAJ or BMAJ;BMIN;BPA (arcsec, arcsec, deg)");
      if (!r->failed)
        {
          rc->bmaj = g_array_index (beam, double, 0);
          rc->bmin = beam->len >= 2 ? g_array_index (beam, double, 1) : rc->bmaj;
          rc->bpa = beam->len >= 3 ? g_array_index (beam, double, 2) : 0.0;
          if (!(rc->bmaj > 0 && rc->bmin > 0 && rc->bmin <= rc->bmaj))
            fail (r, "Grid", "beam-arcsec", "need 0 < BMIN <= BMAJ");
          else if (rc->bmaj != rc->bmin && fmod (fabs (rc->bpa), 90.0) != 0.0)
            fail (r, "Grid", "beam-arcsec",
                  "an elliptical beam must have BPA 0 or 90 deg (the convolution is separable)");
        }
    }
  rc->convolve = get_bool (r, "Grid", "convolve", TRUE);

  check_keys (r, "Physics", physics_keys);
  rc->tex_k = get_ranged (r, "Physics", "tex-k", TRUE, 0, 0, TRUE, 10000, FALSE);
  rc->tbg_k = get_ranged (r, "Physics", "tbg-k", FALSE, EFFLUX_TCMB, 0, FALSE, 10000, FALSE);
  if (!r->failed && rc->tbg_k >= rc->tex_k)
    fail (r, "Physics", "tbg-k", "must be below tex-k (%g K), or the lines are not in emission", rc->tex_k);
  rc->co_abundance = get_ranged (r, "Physics", "co-abundance", TRUE, 0, 0, TRUE, 1, FALSE);
  rc->isotope_ratio = get_ranged (r, "Physics", "isotope-ratio", FALSE, 62, 1, FALSE, INFINITY, FALSE);
  rc->c18o_ratio = get_ranged (r, "Physics", "c18o-ratio", FALSE, 560, 1, FALSE, INFINITY, FALSE);
  rc->mass_per_h2 = get_ranged (r, "Physics", "mass-per-h2", FALSE, 2.8, 0, TRUE, INFINITY, FALSE);

  check_keys (r, "Ambient", ambient_keys);
  if (g_key_file_has_group (r->kf, "Ambient"))
    {
      rc->amb_mass_msun = get_ranged (r, "Ambient", "mass-msun", TRUE, 0, 0, FALSE, INFINITY, FALSE);
      rc->amb_fwhm_kms = get_ranged (r, "Ambient", "fwhm-kms", TRUE, 0, 0, TRUE, INFINITY, FALSE);
      rc->amb_size_arcsec = get_ranged (r, "Ambient", "size-fwhm-arcsec", TRUE, 0, 0, TRUE, INFINITY, FALSE);
      rc->amb_exclude_kms = get_ranged (r, "Ambient", "exclude-kms", FALSE, 1.5 * rc->amb_fwhm_kms,
                                        0, FALSE, INFINITY, FALSE);
    }

  rc->lobes = g_ptr_array_new_with_free_func (lobe_free);
  rc->cubes = g_ptr_array_new_with_free_func (cube_spec_free);
  rc->knots = g_array_new (FALSE, FALSE, sizeof (SynthKnot));
  for (gsize i = 0; groups[i] != NULL && !r->failed; i++)
    {
      const char *g = groups[i];
      SynthLobe *lobe;

      if (!g_str_has_prefix (g, "Lobe "))
        continue;
      check_keys (r, g, lobe_keys);
      lobe = g_new0 (SynthLobe, 1);
      g_ptr_array_add (rc->lobes, lobe);
      lobe->name = g_strstrip (g_strdup (g + 5));
      if (*lobe->name == '\0')
        fail (r, g, NULL, "a lobe needs a name: [Lobe NAME]");
      kind = get_string (r, g, "kind", TRUE, NULL);
      if (kind != NULL && strcmp (kind, "blue") != 0 && strcmp (kind, "red") != 0)
        fail (r, g, "kind", "'%s' is neither blue nor red", kind);
      lobe->red = kind != NULL && strcmp (kind, "red") == 0;
      g_clear_pointer (&kind, g_free);
      lobe->mass_msun = get_ranged (r, g, "mass-msun", TRUE, 0, 0, TRUE, INFINITY, FALSE);
      lobe->length_au = get_ranged (r, g, "length-au", TRUE, 0, 0, TRUE, INFINITY, FALSE);
      lobe->vmin_kms = get_ranged (r, g, "vmin-kms", TRUE, 0, 0, TRUE, INFINITY, FALSE);
      lobe->vmax_kms = get_ranged (r, g, "vmax-kms", TRUE, 0, 0, TRUE, INFINITY, FALSE);
      if (!r->failed && !(lobe->vmax_kms > lobe->vmin_kms))
        fail (r, g, "vmax-kms", "must exceed vmin-kms (%g)", lobe->vmin_kms);
      {
        g_autofree char *shape = get_string (r, g, "shape", FALSE, "cone");
        if (shape != NULL && strcmp (shape, "cone") != 0 && strcmp (shape, "shell") != 0)
          fail (r, g, "shape", "'%s' is neither cone nor shell", shape);
        lobe->shell = shape != NULL && strcmp (shape, "shell") == 0;
      }
      if (lobe->shell)
        {
          /* a shell has no power-law spectrum nor cone: those keys would be ignored, so refuse them */
          if (g_key_file_has_key (r->kf, g, "gamma", NULL))
            fail (r, g, "gamma", "not used by shape=shell (the mass is uniform along the axis)");
          if (g_key_file_has_key (r->kf, g, "half-opening-deg", NULL))
            fail (r, g, "half-opening-deg", "not used by shape=shell (shell-c-per-arcsec gives its width)");
          lobe->shell_c = get_ranged (r, g, "shell-c-per-arcsec", TRUE, 0, 0, TRUE, INFINITY, FALSE);
        }
      else
        {
          if (g_key_file_has_key (r->kf, g, "shell-c-per-arcsec", NULL))
            fail (r, g, "shell-c-per-arcsec", "only for shape=shell");
          lobe->gamma = get_ranged (r, g, "gamma", TRUE, 0, -10, FALSE, 20, FALSE);
          lobe->half_opening_deg = get_ranged (r, g, "half-opening-deg", TRUE, 0, 0, TRUE, 60, FALSE);
        }
    }

  if (g_key_file_has_group (r->kf, "Jet") && !r->failed)
    {
      const char *g = "Jet";
      g_autoptr (GArray) blue = NULL;
      g_autoptr (GArray) red = NULL;

      check_keys (r, g, jet_keys);
      rc->has_jet = TRUE;
      rc->jet_speed_kms = get_ranged (r, g, "speed-kms", TRUE, 0, 0, TRUE, INFINITY, FALSE);
      rc->sio_abundance = get_ranged (r, g, "sio-abundance", TRUE, 0, 0, TRUE, 1, FALSE);
      rc->jet_width_arcsec = get_ranged (r, g, "width-arcsec", FALSE, 0.5 * rc->bmaj, 0, TRUE, INFINITY, FALSE);
      rc->knot_length_arcsec = get_ranged (r, g, "knot-length-arcsec", FALSE, rc->bmaj, 0, TRUE, INFINITY, FALSE);
      rc->knot_fwhm_kms = get_ranged (r, g, "knot-fwhm-kms", TRUE, 0, 0, TRUE, INFINITY, FALSE);
      rc->knot_mass_msun = get_ranged (r, g, "knot-mass-msun", TRUE, 0, 0, TRUE, INFINITY, FALSE);
      blue = get_double_list (r, g, "blue-knot-ages-yr", FALSE);
      red = get_double_list (r, g, "red-knot-ages-yr", FALSE);
      for (guint side = 0; side < 2 && !r->failed; side++)
        {
          GArray *ages = side == 0 ? blue : red;
          for (guint j = 0; j < ages->len; j++)
            {
              SynthKnot knot = { side == 1, g_array_index (ages, double, j) };
              if (!(knot.age_yr > 0))
                {
                  fail (r, g, side == 0 ? "blue-knot-ages-yr" : "red-knot-ages-yr",
                        "ages must be positive (item %u is %g)", j + 1, knot.age_yr);
                  break;
                }
              g_array_append_val (rc->knots, knot);
            }
        }
      if (!r->failed && rc->knots->len == 0)
        fail (r, g, "blue-knot-ages-yr", "a jet needs at least one knot (blue-knot-ages-yr or red-knot-ages-yr)");
    }

  for (gsize i = 0; groups[i] != NULL && !r->failed; i++)
    {
      const char *g = groups[i];
      SynthCubeSpec *c;
      g_autofree char *line = NULL;
      g_autofree char *unit = NULL;
      g_autofree char *spectral = NULL;

      if (!g_str_has_prefix (g, "Cube "))
        continue;
      check_keys (r, g, cube_keys);
      c = g_new0 (SynthCubeSpec, 1);
      g_ptr_array_add (rc->cubes, c);
      c->id = g_strstrip (g_strdup (g + 5));
      if (*c->id == '\0' || strpbrk (c->id, " []") != NULL)
        fail (r, g, NULL, "a cube needs a one-word id: [Cube ID]");
      line = get_string (r, g, "line", TRUE, NULL);
      if (line != NULL)
        {
          c->line = efflux_line_lookup (line);
          if (c->line == NULL)
            fail (r, g, "line", "'%s' is not in the line catalogue", line);
          else if (c->line->species == EFFLUX_SPECIES_SIO && !rc->has_jet)
            fail (r, g, "line", "an SiO cube needs a [Jet] group (SiO traces the jet only)");
        }
      c->file = get_string (r, g, "file", FALSE, NULL);
      if (c->file == NULL && !r->failed)
        c->file = g_strdup_printf ("%s-%s.fits", rc->name, c->id);
      if (!r->failed && !safe_file_name (c->file))
        fail (r, g, "file", "'%s' must be a plain file name (no directories)", c->file);
      unit = get_string (r, g, "unit", FALSE, "K");
      if (unit != NULL && strcmp (unit, "K") == 0)
        c->jy_per_beam = FALSE;
      else if (unit != NULL && strcmp (unit, "Jy/beam") == 0)
        c->jy_per_beam = TRUE;
      else if (unit != NULL)
        fail (r, g, "unit", "'%s' is neither K nor Jy/beam", unit);
      spectral = get_string (r, g, "spectral", FALSE, "vrad");
      if (spectral != NULL && g_ascii_strcasecmp (spectral, "vrad") == 0)
        c->freq = FALSE;
      else if (spectral != NULL && g_ascii_strcasecmp (spectral, "freq") == 0)
        c->freq = TRUE;
      else if (spectral != NULL)
        fail (r, g, "spectral", "'%s' is neither vrad nor freq", spectral);
      c->rms_k = get_ranged (r, g, "rms-k", FALSE, 0, 0, FALSE, INFINITY, FALSE);
    }
  if (!r->failed && rc->cubes->len == 0)
    fail (r, "Recipe", NULL, "no [Cube ID] group: nothing to write");
  /* two cubes must not share a file */
  for (guint a = 0; a < rc->cubes->len && !r->failed; a++)
    for (guint b = a + 1; b < rc->cubes->len && !r->failed; b++)
      {
        SynthCubeSpec *ca = g_ptr_array_index (rc->cubes, a), *cb = g_ptr_array_index (rc->cubes, b);
        if (strcmp (ca->file, cb->file) == 0)
          {
            g_autofree char *grp = g_strconcat ("Cube ", cb->id, NULL);
            fail (r, grp, "file", "'%s' is already the file of [Cube %s]", cb->file, ca->id);
          }
      }
}

EffluxSynthRecipe *
efflux_synth_recipe_load_data (const char  *data,
                               const char  *name,
                               GError     **error)
{
  g_autoptr (GKeyFile) kf = g_key_file_new ();
  g_autoptr (EffluxSynthRecipe) rc = g_new0 (EffluxSynthRecipe, 1);
  g_autoptr (GError) local = NULL;
  Reader r = { kf, name, error, FALSE };

  rc->path = g_strdup (name);
  if (!g_key_file_load_from_data (kf, data, (gsize) -1, G_KEY_FILE_NONE, &local))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: not a key file: %s", name, local->message);
      return NULL;
    }
  parse_recipe (&r, rc);
  if (r.failed)
    return NULL;
  return g_steal_pointer (&rc);
}

EffluxSynthRecipe *
efflux_synth_recipe_load (const char  *path,
                          GError     **error)
{
  g_autofree char *data = NULL;
  g_autoptr (GError) local = NULL;

  if (!g_file_get_contents (path, &data, NULL, &local))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: cannot read the recipe: %s", path,
                   local->message);
      return NULL;
    }
  return efflux_synth_recipe_load_data (data, path, error);
}

guint
efflux_synth_recipe_n_cubes (const EffluxSynthRecipe *recipe)
{
  return recipe->cubes->len;
}

const char *
efflux_synth_recipe_cube_id (const EffluxSynthRecipe *recipe,
                             guint                    index)
{
  g_return_val_if_fail (index < recipe->cubes->len, NULL);
  return ((SynthCubeSpec *) g_ptr_array_index (recipe->cubes, index))->id;
}

const EffluxLine *
efflux_synth_recipe_cube_line (const EffluxSynthRecipe *recipe,
                               guint                    index)
{
  g_return_val_if_fail (index < recipe->cubes->len, NULL);
  return ((SynthCubeSpec *) g_ptr_array_index (recipe->cubes, index))->line;
}

/* ------------------------------------------------------------------------------------------ */
/* Model */

/* Sky-plane geometry around the source: offsets in arcsec east and north of the source, from the
 * intermediate coordinates of the TAN grid (linear in pixels: CDELT1 < 0, no rotation). */
typedef struct
{
  double xs, ys;       /* 0-based pixel of the source */
  double pix;          /* arcsec */
  double ae, an;       /* unit vector of the blue axis (east, north) */
  double sin_i, cos_i;
} Geometry;

static void
geometry_init (Geometry                *geo,
               const EffluxSynthRecipe *rc)
{
  double pa = rc->pa_deg * G_PI / 180.0, inc = rc->incl_deg * G_PI / 180.0;

  geo->xs = ((double) rc->nx - 1.0) / 2.0;
  geo->ys = ((double) rc->ny - 1.0) / 2.0;
  geo->pix = rc->pixel_arcsec;
  geo->ae = sin (pa);
  geo->an = cos (pa);
  geo->sin_i = sin (inc);
  geo->cos_i = cos (inc);
}

/* (s along the blue axis, t across it, arcsec) -> 0-based pixel */
static void
geometry_st_to_pixel (const Geometry *geo,
                      double          s,
                      double          t,
                      double         *x,
                      double         *y)
{
  double e = s * geo->ae + t * geo->an;
  double n = s * geo->an - t * geo->ae;

  *x = geo->xs - e / geo->pix;
  *y = geo->ys + n / geo->pix;
}

static void
geometry_pixel_to_st (const Geometry *geo,
                      double          x,
                      double          y,
                      double         *s,
                      double         *t)
{
  double e = -(x - geo->xs) * geo->pix;
  double n = (y - geo->ys) * geo->pix;

  *s = e * geo->ae + n * geo->an;
  *t = e * geo->an - n * geo->ae;
}

/* integral of V^-gamma dV from a to b (0 < a <= b) */
static double
power_integral (double gamma,
                double a,
                double b)
{
  if (fabs (gamma - 1.0) < 1e-12)
    return log (b / a);
  return (pow (b, 1.0 - gamma) - pow (a, 1.0 - gamma)) / (1.0 - gamma);
}

static double
normal_cdf (double z)
{
  return 0.5 * erfc (-z / G_SQRT2);
}

static double
channel_velocity (const EffluxSynthRecipe *rc,
                  gsize                    k)
{
  return rc->vstart_kms + (double) k * rc->dv_kms;
}

/* Per-lobe truth, filled while the model is built. */
typedef struct
{
  GArray *v;       /* channel-centre velocities (km/s) of the channels holding mass */
  GArray *m;       /* their masses (Msun) */
  double  t0_yr;
  double  s_max;   /* projected length, arcsec */
  double  w_max;   /* half-width at the far end, arcsec */
} LobeTruth;

static void
lobe_truth_clear (LobeTruth *lt)
{
  g_clear_pointer (&lt->v, g_array_unref);
  g_clear_pointer (&lt->m, g_array_unref);
}

static double
sign_of_lobe (const SynthLobe *lobe)
{
  return lobe->red ? -1.0 : 1.0;   /* +s is the blue side */
}

/* Spread `mass_g` uniformly over the part of the lobe's cone between projected offsets s_a and s_b
 * (arcsec, along the lobe's own direction), in channel k. */
static void
spread_segment (const EffluxSynthRecipe *rc,
                const Geometry          *geo,
                const SynthLobe         *lobe,
                double                   s_a,
                double                   s_b,
                double                   mass_g,
                gsize                    k,
                double                   h2_per_gram,
                double                  *h2)
{
  double sg = sign_of_lobe (lobe);
  double tan_h = tan (lobe->half_opening_deg * G_PI / 180.0);
  double w_b = s_b / geo->sin_i * tan_h;   /* half-width (arcsec) at s_b: r tan(theta), r = s / sin i */
  double cx[4], cy[4];
  double xmin = G_MAXDOUBLE, xmax = -G_MAXDOUBLE, ymin = G_MAXDOUBLE, ymax = -G_MAXDOUBLE;
  gssize x0, x1, y0, y1;
  g_autofree guint *hits = NULL;
  guint64 total = 0;
  gsize bw, bh;

  geometry_st_to_pixel (geo, sg * s_a, -w_b, &cx[0], &cy[0]);
  geometry_st_to_pixel (geo, sg * s_a, w_b, &cx[1], &cy[1]);
  geometry_st_to_pixel (geo, sg * s_b, -w_b, &cx[2], &cy[2]);
  geometry_st_to_pixel (geo, sg * s_b, w_b, &cx[3], &cy[3]);
  for (int c = 0; c < 4; c++)
    {
      xmin = MIN (xmin, cx[c]);
      xmax = MAX (xmax, cx[c]);
      ymin = MIN (ymin, cy[c]);
      ymax = MAX (ymax, cy[c]);
    }
  x0 = MAX ((gssize) floor (xmin), 0);
  x1 = MIN ((gssize) ceil (xmax), (gssize) rc->nx - 1);
  y0 = MAX ((gssize) floor (ymin), 0);
  y1 = MIN ((gssize) ceil (ymax), (gssize) rc->ny - 1);

  if (x0 <= x1 && y0 <= y1)
    {
      bw = (gsize) (x1 - x0 + 1);
      bh = (gsize) (y1 - y0 + 1);
      hits = g_new0 (guint, bw * bh);
      for (gssize y = y0; y <= y1; y++)
        for (gssize x = x0; x <= x1; x++)
          for (int j = 0; j < SUBSAMPLE; j++)
            for (int i = 0; i < SUBSAMPLE; i++)
              {
                double px = (double) x + ((double) i + 0.5) / SUBSAMPLE - 0.5;
                double py = (double) y + ((double) j + 0.5) / SUBSAMPLE - 0.5;
                double s, t;

                geometry_pixel_to_st (geo, px, py, &s, &t);
                s *= sg;
                t *= sg;
                if (s >= s_a && s < s_b && fabs (t) <= s / geo->sin_i * tan_h)
                  {
                    hits[(gsize) (y - y0) * bw + (gsize) (x - x0)]++;
                    total++;
                  }
              }
    }
  if (total == 0)
    {
      /* thinner than a sub-sample: the whole mass goes to the pixel holding the segment's middle */
      double px, py;
      gsize ix, iy;

      geometry_st_to_pixel (geo, sg * 0.5 * (s_a + s_b), 0.0, &px, &py);
      ix = (gsize) CLAMP (lround (px), 0, (long) rc->nx - 1);
      iy = (gsize) CLAMP (lround (py), 0, (long) rc->ny - 1);
      h2[(iy * rc->nx + ix) * rc->nchan + k] += mass_g * h2_per_gram;
      return;
    }
  for (gsize y = 0; y < bh; y++)
    for (gsize x = 0; x < bw; x++)
      if (hits[y * bw + x] > 0)
        {
          gsize px = (gsize) x0 + x, py = (gsize) y0 + y;
          h2[(py * rc->nx + px) * rc->nchan + k] +=
            mass_g * ((double) hits[y * bw + x] / (double) total) * h2_per_gram;
        }
}

/* The lobe's corners must lie on the map, or part of its mass would be lost. */
static gboolean
lobe_fits_map (const EffluxSynthRecipe *rc,
               const Geometry          *geo,
               const SynthLobe         *lobe,
               double                   s_max,
               double                   w_max)
{
  double sg = sign_of_lobe (lobe);
  double pts[3][2] = { { 0, 0 }, { s_max, w_max }, { s_max, -w_max } };

  for (int c = 0; c < 3; c++)
    {
      double x, y;
      geometry_st_to_pixel (geo, sg * pts[c][0], sg * pts[c][1], &x, &y);
      if (x < -0.5 || y < -0.5 || x > (double) rc->nx - 0.5 || y > (double) rc->ny - 0.5)
        return FALSE;
    }
  return TRUE;
}

static gboolean
build_lobe (const EffluxSynthRecipe *rc,
            const Geometry          *geo,
            const SynthLobe         *lobe,
            double                   h2_per_gram,
            double                  *h2,
            LobeTruth               *lt,
            GError                 **error)
{
  double half = 0.5 * fabs (rc->dv_kms);
  double norm = lobe->mass_msun / power_integral (lobe->gamma, lobe->vmin_kms, lobe->vmax_kms);
  double t0_s = lobe->length_au * EFFLUX_AU / (lobe->vmax_kms * EFFLUX_KM);
  double arcsec_per_kms = t0_s * EFFLUX_KM / EFFLUX_AU / rc->distance_pc * geo->sin_i;  /* s per V */
  double vlo_band = MIN (channel_velocity (rc, 0), channel_velocity (rc, rc->nchan - 1)) - half;
  double vhi_band = MAX (channel_velocity (rc, 0), channel_velocity (rc, rc->nchan - 1)) + half;
  double v_far = rc->vsys_kms + (lobe->red ? 1.0 : -1.0) * lobe->vmax_kms * geo->cos_i;
  double v_near = rc->vsys_kms + (lobe->red ? 1.0 : -1.0) * lobe->vmin_kms * geo->cos_i;
  double mass_sum = 0.0;

  lt->t0_yr = t0_s / EFFLUX_YR;
  lt->s_max = lobe->length_au / rc->distance_pc * geo->sin_i;
  lt->w_max = lobe->length_au / rc->distance_pc * tan (lobe->half_opening_deg * G_PI / 180.0);
  lt->v = g_array_new (FALSE, FALSE, sizeof (double));
  lt->m = g_array_new (FALSE, FALSE, sizeof (double));

  if (v_far < vlo_band || v_far > vhi_band || v_near < vlo_band || v_near > vhi_band)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: [Lobe %s] vmax-kms: the lobe's line-of-sight velocities (%.3f to %.3f km/s) "
                   "run off the spectral axis (%.3f to %.3f km/s)", rc->path, lobe->name,
                   MIN (v_near, v_far), MAX (v_near, v_far), vlo_band, vhi_band);
      return FALSE;
    }
  if (!lobe_fits_map (rc, geo, lobe, lt->s_max, lt->w_max))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: [Lobe %s] length-au: the lobe (%.2f arcsec projected, %.2f arcsec half-width) "
                   "runs off the map", rc->path, lobe->name, lt->s_max, lt->w_max);
      return FALSE;
    }

  for (gsize k = 0; k < rc->nchan; k++)
    {
      double vc = channel_velocity (rc, k);
      double va = vc - half, vb = vc + half;
      double ua, ub, Va, Vb, m;

      /* line-of-sight offsets from vsys covered by the channel, on this lobe's side */
      if (lobe->red)
        {
          ua = va - rc->vsys_kms;
          ub = vb - rc->vsys_kms;
        }
      else
        {
          ua = rc->vsys_kms - vb;
          ub = rc->vsys_kms - va;
        }
      ua = MAX (ua, 0.0);
      if (ub <= ua)
        continue;
      Va = MAX (ua / geo->cos_i, lobe->vmin_kms);
      Vb = MIN (ub / geo->cos_i, lobe->vmax_kms);
      if (Vb <= Va)
        continue;
      m = norm * power_integral (lobe->gamma, Va, Vb);
      if (!(m > 0.0))
        continue;
      spread_segment (rc, geo, lobe, Va * arcsec_per_kms, Vb * arcsec_per_kms, m * EFFLUX_MSUN, k,
                      h2_per_gram, h2);
      g_array_append_val (lt->v, vc);
      g_array_append_val (lt->m, m);
      mass_sum += m;
    }
  if (!(fabs (mass_sum - lobe->mass_msun) <= 1e-9 * lobe->mass_msun))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: [Lobe %s] vmin-kms: only %.6g of %.6g Msun fall in channels of the spectral axis",
                   rc->path, lobe->name, mass_sum, lobe->mass_msun);
      return FALSE;
    }
  return TRUE;
}

/* A wind-driven shell (Lee et al. 2000, ApJ 542, 925): the parabolic surface z = C R^2 around the
 * axis, from z = vmin t0 to z = length (true lengths, in arcsec at the distance), in a Hubble flow
 * v = r / t0 with t0 = length-au / vmax-kms (so the tip moves at vmax along the axis). The mass is
 * uniform per unit z and in azimuth phi: SHELL_NZ x SHELL_NPHI samples at the midpoints of equal
 * cells. A sample at (z, R = sqrt (z / C), phi) lies at rho = R cos phi in the plane holding the
 * axis and the line of sight, t = R sin phi across; it is seen at the projected offset
 * s = z sin i + rho cos i along the lobe's direction and has the line-of-sight position
 * l = z cos i - rho sin i away from the observer for the red lobe (its mirror for the blue one),
 * hence the velocity vsys +- l / t0. In the cut plane this is REFERENCES.md 1.10 item 2 with
 * a = 90 - i. Each sample's mass goes to the channel holding its velocity and, bilinearly, to the
 * four pixels around its position; the truth per channel is the sum of what was put there. */
#define SHELL_NZ 600
#define SHELL_NPHI 360

static gboolean
build_shell (const EffluxSynthRecipe *rc,
             const Geometry          *geo,
             const SynthLobe         *lobe,
             double                   h2_per_gram,
             double                  *h2,
             LobeTruth               *lt,
             GError                 **error)
{
  double sg = sign_of_lobe (lobe), vs = lobe->red ? 1.0 : -1.0;
  double t0_s = lobe->length_au * EFFLUX_AU / (lobe->vmax_kms * EFFLUX_KM);
  double z_max = lobe->length_au / rc->distance_pc;                 /* arcsec */
  double z_min = lobe->vmin_kms / lobe->vmax_kms * z_max;
  double kms_per_arcsec = rc->distance_pc * EFFLUX_AU / t0_s / EFFLUX_KM;
  double dm_g = lobe->mass_msun * EFFLUX_MSUN / ((double) SHELL_NZ * SHELL_NPHI);
  double v0 = channel_velocity (rc, 0);
  g_autofree double *chan_mass = g_new0 (double, rc->nchan);
  double s_max = 0.0, w_max = 0.0;

  lt->t0_yr = t0_s / EFFLUX_YR;
  lt->v = g_array_new (FALSE, FALSE, sizeof (double));
  lt->m = g_array_new (FALSE, FALSE, sizeof (double));
  for (int iz = 0; iz < SHELL_NZ; iz++)
    {
      double z = z_min + (z_max - z_min) * (iz + 0.5) / SHELL_NZ;
      double rr = sqrt (z / lobe->shell_c);

      for (int ip = 0; ip < SHELL_NPHI; ip++)
        {
          double phi = 2.0 * G_PI * (ip + 0.5) / SHELL_NPHI;
          double rho = rr * cos (phi), t = rr * sin (phi);
          double s = z * geo->sin_i + rho * geo->cos_i;
          double l = z * geo->cos_i - rho * geo->sin_i;
          double v = rc->vsys_kms + vs * l * kms_per_arcsec;
          double kf = (v - v0) / rc->dv_kms, x, y, fx, fy;
          gssize k = (gssize) floor (kf + 0.5), ix, iy;

          geometry_st_to_pixel (geo, sg * s, sg * t, &x, &y);
          if (k < 0 || k >= (gssize) rc->nchan)
            {
              g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                           "%s: [Lobe %s] vmax-kms: the shell's line-of-sight velocity %.3f km/s runs "
                           "off the spectral axis", rc->path, lobe->name, v);
              return FALSE;
            }
          if (x < 0.0 || y < 0.0 || x > (double) rc->nx - 1 || y > (double) rc->ny - 1)
            {
              g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                           "%s: [Lobe %s] length-au: the shell (%.2f arcsec projected) runs off the map",
                           rc->path, lobe->name, s);
              return FALSE;
            }
          s_max = MAX (s_max, s);
          w_max = MAX (w_max, fabs (t));
          ix = (gssize) floor (x);
          iy = (gssize) floor (y);
          fx = x - (double) ix;
          fy = y - (double) iy;
          for (int b = 0; b < 2; b++)
            for (int a = 0; a < 2; a++)
              {
                double w = (a ? fx : 1.0 - fx) * (b ? fy : 1.0 - fy);
                gssize px = MIN (ix + a, (gssize) rc->nx - 1), py = MIN (iy + b, (gssize) rc->ny - 1);
                if (w > 0.0)
                  h2[((gsize) py * rc->nx + (gsize) px) * rc->nchan + (gsize) k] += dm_g * w * h2_per_gram;
              }
          chan_mass[k] += dm_g / EFFLUX_MSUN;
        }
    }
  for (gsize k = 0; k < rc->nchan; k++)
    if (chan_mass[k] > 0.0)
      {
        double vc = channel_velocity (rc, k);
        g_array_append_val (lt->v, vc);
        g_array_append_val (lt->m, chan_mass[k]);
      }
  lt->s_max = s_max;
  lt->w_max = w_max;
  return TRUE;
}

static void
build_ambient (const EffluxSynthRecipe *rc,
               const Geometry          *geo,
               double                   h2_per_gram,
               double                  *h2)
{
  double sig_s = rc->amb_size_arcsec / FWHM_PER_SIGMA;
  double sig_v = rc->amb_fwhm_kms / FWHM_PER_SIGMA;
  double half = 0.5 * fabs (rc->dv_kms);
  g_autofree double *fxy = g_new (double, rc->nx * rc->ny);
  g_autofree double *fk = g_new (double, rc->nchan);
  double sxy = 0.0, sk = 0.0;
  double mass_g = rc->amb_mass_msun * EFFLUX_MSUN;

  if (!(mass_g > 0.0))
    return;
  for (gsize y = 0; y < rc->ny; y++)
    for (gsize x = 0; x < rc->nx; x++)
      {
        double dx = ((double) x - geo->xs) * geo->pix, dy = ((double) y - geo->ys) * geo->pix;
        double f = exp (-0.5 * (dx * dx + dy * dy) / (sig_s * sig_s));
        fxy[y * rc->nx + x] = f;
        sxy += f;
      }
  for (gsize k = 0; k < rc->nchan; k++)
    {
      double vc = channel_velocity (rc, k);
      fk[k] = normal_cdf ((vc + half - rc->vsys_kms) / sig_v) - normal_cdf ((vc - half - rc->vsys_kms) / sig_v);
      sk += fk[k];
    }
  for (gsize i = 0; i < rc->nx * rc->ny; i++)
    for (gsize k = 0; k < rc->nchan; k++)
      h2[i * rc->nchan + k] += mass_g * (fxy[i] / sxy) * (fk[k] / sk) * h2_per_gram;
}

/* Position of a knot: projected offset (arcsec, along its side) and LSR velocity. */
static void
knot_position (const EffluxSynthRecipe *rc,
               const Geometry          *geo,
               const SynthKnot         *knot,
               double                  *offset_arcsec,
               double                  *v_lsr,
               double                  *r_true_au)
{
  double r_au = rc->jet_speed_kms * EFFLUX_KM * knot->age_yr * EFFLUX_YR / EFFLUX_AU;

  *r_true_au = r_au;
  *offset_arcsec = r_au / rc->distance_pc * geo->sin_i;
  *v_lsr = rc->vsys_kms + (knot->red ? 1.0 : -1.0) * rc->jet_speed_kms * geo->cos_i;
}

static gboolean
build_jet (const EffluxSynthRecipe *rc,
           const Geometry          *geo,
           double                   h2_per_gram,
           double                  *h2,
           GError                 **error)
{
  double sig_a = rc->knot_length_arcsec / FWHM_PER_SIGMA;
  double sig_c = rc->jet_width_arcsec / FWHM_PER_SIGMA;
  double sig_v = rc->knot_fwhm_kms / FWHM_PER_SIGMA;
  double half = 0.5 * fabs (rc->dv_kms);
  g_autofree double *fxy = g_new (double, rc->nx * rc->ny);
  g_autofree double *fk = g_new (double, rc->nchan);

  for (guint j = 0; j < rc->knots->len; j++)
    {
      const SynthKnot *knot = &g_array_index (rc->knots, SynthKnot, j);
      double off, vlsr, r_au, sg = knot->red ? -1.0 : 1.0, sxy = 0.0, sk = 0.0;
      double kx, ky;
      double mass_g = rc->knot_mass_msun * EFFLUX_MSUN;

      knot_position (rc, geo, knot, &off, &vlsr, &r_au);
      geometry_st_to_pixel (geo, sg * off, 0.0, &kx, &ky);
      if (kx < 0 || ky < 0 || kx > (double) rc->nx - 1 || ky > (double) rc->ny - 1)
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                       "%s: [Jet] %s-knot-ages-yr: the knot of age %g yr (%.2f arcsec from the source) "
                       "lies off the map", rc->path, knot->red ? "red" : "blue", knot->age_yr, off);
          return FALSE;
        }
      for (gsize y = 0; y < rc->ny; y++)
        for (gsize x = 0; x < rc->nx; x++)
          {
            double f = 0.0;
            /* sub-sampled: the jet is narrower than a few pixels */
            for (int b = 0; b < SUBSAMPLE; b++)
              for (int a = 0; a < SUBSAMPLE; a++)
                {
                  double s, t;
                  geometry_pixel_to_st (geo, (double) x + (a + 0.5) / SUBSAMPLE - 0.5,
                                        (double) y + (b + 0.5) / SUBSAMPLE - 0.5, &s, &t);
                  s = s * sg - off;
                  f += exp (-0.5 * (s * s / (sig_a * sig_a) + t * t / (sig_c * sig_c)));
                }
            fxy[y * rc->nx + x] = f;
            sxy += f;
          }
      for (gsize k = 0; k < rc->nchan; k++)
        {
          double vc = channel_velocity (rc, k);
          fk[k] = normal_cdf ((vc + half - vlsr) / sig_v) - normal_cdf ((vc - half - vlsr) / sig_v);
          sk += fk[k];
        }
      if (sk < 0.99)
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                       "%s: [Jet] speed-kms: the knot line at %.2f km/s runs off the spectral axis",
                       rc->path, vlsr);
          return FALSE;
        }
      for (gsize i = 0; i < rc->nx * rc->ny; i++)
        if (fxy[i] > 0.0)
          for (gsize k = 0; k < rc->nchan; k++)
            h2[i * rc->nchan + k] += mass_g * (fxy[i] / sxy) * (fk[k] / sk) * h2_per_gram;
    }
  return TRUE;
}

void
efflux_synth_model_free (EffluxSynthModel *model)
{
  if (model == NULL)
    return;
  g_free (model->lobe_h2);
  g_free (model->ambient_h2);
  g_free (model->jet_h2);
  if (model->grid != NULL)
    efflux_cube_free (model->grid);
  g_free (model);
}

static EffluxSynthModel *
model_build (const EffluxSynthRecipe *rc,
             LobeTruth               *truths,
             GError                 **error)
{
  g_autoptr (EffluxSynthModel) model = g_new0 (EffluxSynthModel, 1);
  gsize n = rc->nx * rc->ny * rc->nchan;
  double pix_cm = rc->distance_pc * EFFLUX_PC * rc->pixel_arcsec * EFFLUX_ARCSEC;
  double h2_per_gram;
  Geometry geo;

  if (n > (gsize) 1 << 28)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: [Grid] nchan: %" G_GSIZE_FORMAT " voxels is more than synthetic data needs",
                   rc->path, n);
      return NULL;
    }
  geometry_init (&geo, rc);
  model->nx = rc->nx;
  model->ny = rc->ny;
  model->nchan = rc->nchan;
  model->pixel_area_cm2 = pix_cm * pix_cm;
  /* H2 column per gram of gas in one pixel: 1 / (mu m_H A_pix) */
  h2_per_gram = 1.0 / (rc->mass_per_h2 * EFFLUX_M_H * model->pixel_area_cm2);
  model->grid = efflux_cube_new_simple (rc->nx, rc->ny, rc->nchan, rc->ra_deg, rc->dec_deg,
                                        rc->pixel_arcsec, rc->vstart_kms, rc->dv_kms, 0.0);
  model->lobe_h2 = g_try_new0 (double, n);
  model->ambient_h2 = g_try_new0 (double, n);
  model->jet_h2 = g_try_new0 (double, n);
  if (model->grid == NULL || model->lobe_h2 == NULL || model->ambient_h2 == NULL || model->jet_h2 == NULL)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_MEMORY, "%s: [Grid]: not enough memory for the model",
                   rc->path);
      return NULL;
    }
  model->grid->has_beam = TRUE;
  model->grid->bmaj_arcsec = rc->bmaj;
  model->grid->bmin_arcsec = rc->bmin;
  model->grid->bpa_deg = rc->bpa;

  for (guint l = 0; l < rc->lobes->len; l++)
    {
      const SynthLobe *lobe = g_ptr_array_index (rc->lobes, l);
      if (!(lobe->shell ? build_shell : build_lobe) (rc, &geo, lobe, h2_per_gram, model->lobe_h2,
                                                     &truths[l], error))
        return NULL;
    }
  build_ambient (rc, &geo, h2_per_gram, model->ambient_h2);
  if (rc->has_jet && !build_jet (rc, &geo, h2_per_gram, model->jet_h2, error))
    return NULL;
  return g_steal_pointer (&model);
}

EffluxSynthModel *
efflux_synth_model_new (const EffluxSynthRecipe *recipe,
                        GError                 **error)
{
  g_autofree LobeTruth *truths = g_new0 (LobeTruth, recipe->lobes->len + 1);
  EffluxSynthModel *model = model_build (recipe, truths, error);

  for (guint l = 0; l < recipe->lobes->len; l++)
    lobe_truth_clear (&truths[l]);
  return model;
}

/* ------------------------------------------------------------------------------------------ */
/* Rendering */

/* In-place separable Gaussian convolution of every channel. Kernel normalised to 1, cut at 4
 * sigma; outside the map counts as zero (emission near the edge leaks out, as it would). */
static void
convolve_axis (float       *data,
               gsize        nx,
               gsize        ny,
               gsize        nchan,
               double       sigma_pix,
               gboolean     along_x)
{
  gssize half = (gssize) ceil (4.0 * sigma_pix);
  g_autofree double *w = g_new (double, 2 * half + 1);
  gsize nline = along_x ? nx : ny, nlines = along_x ? ny : nx;
  g_autofree double *acc = g_new (double, nline * nchan);
  double sum = 0.0;

  for (gssize j = -half; j <= half; j++)
    {
      w[j + half] = exp (-0.5 * (double) (j * j) / (sigma_pix * sigma_pix));
      sum += w[j + half];
    }
  for (gssize j = -half; j <= half; j++)
    w[j + half] /= sum;

  for (gsize line = 0; line < nlines; line++)
    {
      memset (acc, 0, nline * nchan * sizeof (double));
      for (gsize p = 0; p < nline; p++)
        {
          gsize x = along_x ? p : line, y = along_x ? line : p;
          const float *src = data + (y * nx + x) * nchan;
          for (gssize j = -half; j <= half; j++)
            {
              gssize q = (gssize) p + j;
              double wj = w[j + half];
              double *dst;
              if (q < 0 || q >= (gssize) nline)
                continue;
              dst = acc + (gsize) q * nchan;
              for (gsize k = 0; k < nchan; k++)
                dst[k] += wj * src[k];
            }
        }
      for (gsize p = 0; p < nline; p++)
        {
          gsize x = along_x ? p : line, y = along_x ? line : p;
          float *out = data + (y * nx + x) * nchan;
          for (gsize k = 0; k < nchan; k++)
            out[k] = (float) acc[p * nchan + k];
        }
    }
}

/* Standard normal deviates by the Box-Muller transform from GRand's uniform doubles. */
static double
gaussian (GRand   *rand,
          double  *spare,
          gboolean *have_spare)
{
  double u1, u2, rad;

  if (*have_spare)
    {
      *have_spare = FALSE;
      return *spare;
    }
  do
    u1 = g_rand_double (rand);
  while (u1 <= 0.0);
  u2 = g_rand_double (rand);
  rad = sqrt (-2.0 * log (u1));
  *spare = rad * sin (2.0 * G_PI * u2);
  *have_spare = TRUE;
  return rad * cos (2.0 * G_PI * u2);
}

/* Optical depth per unit H2 column (cm^2) of a cube's line in one channel: the tracer's abundance
 * (12CO: co-abundance; 13CO and C18O: divided by their ratios; SiO: sio-abundance) times
 * efflux_lte_tau per unit tracer column. tau is proportional to the column (efflux_lte_tau is N
 * over the column per unit opacity integral), so one call gives the factor. */
static double
cube_tau_per_h2 (const EffluxSynthRecipe *recipe,
                 const SynthCubeSpec     *spec)
{
  double x;

  switch (spec->line->species)
    {
    case EFFLUX_SPECIES_12CO:
      x = recipe->co_abundance;
      break;
    case EFFLUX_SPECIES_13CO:
      x = recipe->co_abundance / recipe->isotope_ratio;
      break;
    case EFFLUX_SPECIES_C18O:
      x = recipe->co_abundance / recipe->c18o_ratio;
      break;
    case EFFLUX_SPECIES_SIO:
    default:
      x = recipe->sio_abundance;
      break;
    }
  return x * efflux_lte_tau (spec->line, recipe->tex_k, 1e15, fabs (recipe->dv_kms)) / 1e15;
}

EffluxCube *
efflux_synth_render (const EffluxSynthRecipe *recipe,
                     const EffluxSynthModel  *model,
                     guint                    index,
                     GError                 **error)
{
  const SynthCubeSpec *spec;
  const EffluxLine *line;
  g_autoptr (EffluxCube) cube = NULL;
  gsize n = model->nx * model->ny * model->nchan;
  double tau_per_h2, t_amp;
  gboolean co_gas;

  g_return_val_if_fail (index < recipe->cubes->len, NULL);
  spec = g_ptr_array_index (recipe->cubes, index);
  line = spec->line;
  cube = efflux_cube_new_simple (model->nx, model->ny, model->nchan, recipe->ra_deg, recipe->dec_deg,
                                 recipe->pixel_arcsec, recipe->vstart_kms, recipe->dv_kms, line->freq_hz);
  if (cube == NULL)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_MEMORY, "%s: [Cube %s]: not enough memory",
                   recipe->path, spec->id);
      return NULL;
    }
  cube->has_beam = TRUE;
  cube->bmaj_arcsec = recipe->bmaj;
  cube->bmin_arcsec = recipe->bmin;
  cube->bpa_deg = recipe->bpa;
  g_free (cube->object);
  cube->object = g_strdup (recipe->source_name);

  /* CO isotopologues see the lobes and the ambient cloud, SiO the jet */
  co_gas = line->species != EFFLUX_SPECIES_SIO;
  tau_per_h2 = cube_tau_per_h2 (recipe, spec);
  /* T = (J(Tex) - J(Tbg)) (1 - e^-tau): the amplitude read from efflux_lte_brightness at tau = 1 */
  t_amp = efflux_lte_brightness (line, recipe->tex_k, recipe->tbg_k, 1.0) / -expm1 (-1.0);
  if (!isfinite (tau_per_h2) || !isfinite (t_amp))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: [Physics] tex-k: no LTE optical depth for %s at %g K", recipe->path,
                   line->name, recipe->tex_k);
      return NULL;
    }
  for (gsize i = 0; i < n; i++)
    {
      double col = co_gas ? model->lobe_h2[i] + model->ambient_h2[i] : model->jet_h2[i];
      cube->data[i] = col > 0.0 ? (float) (t_amp * -expm1 (-tau_per_h2 * col)) : 0.0f;
    }

  if (recipe->convolve)
    {
      double bx = recipe->bmin, by = recipe->bmaj;   /* BPA 0: the major axis runs north */
      if (recipe->bmaj != recipe->bmin && fmod (fabs (recipe->bpa), 180.0) == 90.0)
        {
          bx = recipe->bmaj;
          by = recipe->bmin;
        }
      convolve_axis (cube->data, model->nx, model->ny, model->nchan,
                     bx / FWHM_PER_SIGMA / recipe->pixel_arcsec, TRUE);
      convolve_axis (cube->data, model->nx, model->ny, model->nchan,
                     by / FWHM_PER_SIGMA / recipe->pixel_arcsec, FALSE);
    }

  if (spec->rms_k > 0.0)
    {
      guint32 seeds[3] = { (guint32) (recipe->seed & 0xffffffffu), (guint32) (recipe->seed >> 32), index };
      GRand *rand = g_rand_new_with_seed_array (seeds, 3);
      double spare = 0.0;
      gboolean have_spare = FALSE;

      for (gsize i = 0; i < n; i++)
        cube->data[i] = (float) (cube->data[i] + spec->rms_k * gaussian (rand, &spare, &have_spare));
      g_rand_free (rand);
    }
  return g_steal_pointer (&cube);
}

/* ------------------------------------------------------------------------------------------ */
/* Output: cubes, truth, dossier */

typedef struct
{
  double v_lo, v_hi;   /* dossier velocity range (inclusive, channel centres +- a quarter channel) */
  gboolean any;
  double mass, p_obs, e_obs_kms2;            /* all of the lobe */
  double mass_in, p_obs_in, e_obs_in_kms2;   /* inside the range */
  double vmax_channel;
} LobeSums;

static void
lobe_sums (const EffluxSynthRecipe *rc,
           const LobeTruth         *lt,
           LobeSums                *s)
{
  double q = 0.25 * fabs (rc->dv_kms);
  double lo = G_MAXDOUBLE, hi = -G_MAXDOUBLE;

  memset (s, 0, sizeof *s);
  for (guint k = 0; k < lt->v->len; k++)
    {
      double v = g_array_index (lt->v, double, k), m = g_array_index (lt->m, double, k);
      double u = fabs (v - rc->vsys_kms);

      s->mass += m;
      s->p_obs += m * u;
      s->e_obs_kms2 += 0.5 * m * u * u;
      s->vmax_channel = MAX (s->vmax_channel, u);
      if (u >= rc->amb_exclude_kms && u > 0.0)
        {
          s->any = TRUE;
          lo = MIN (lo, v);
          hi = MAX (hi, v);
          s->mass_in += m;
          s->p_obs_in += m * u;
          s->e_obs_in_kms2 += 0.5 * m * u * u;
        }
    }
  s->v_lo = lo - q;
  s->v_hi = hi + q;
}

/* Msun km^2/s^2 -> erg */
#define ERG_PER_MSUN_KMS2 (EFFLUX_MSUN * EFFLUX_KM * EFFLUX_KM)

static char *
truth_text (const EffluxSynthRecipe *rc,
            const EffluxSynthModel  *model,
            const LobeTruth         *truths,
            const double            *peak_tau)
{
  g_autoptr (GKeyFile) kf = g_key_file_new ();
  double cos_i = cos (rc->incl_deg * G_PI / 180.0), sin_i = sin (rc->incl_deg * G_PI / 180.0);
  g_autofree char *recipe_base = g_path_get_basename (rc->path);
  Geometry geo;
  double amb = 0.0;

  geometry_init (&geo, rc);
  for (gsize i = 0; i < model->nx * model->ny * model->nchan; i++)
    amb += model->ambient_h2[i];
  amb *= rc->mass_per_h2 * EFFLUX_M_H * model->pixel_area_cm2 / EFFLUX_MSUN;

  g_key_file_set_string (kf, "Truth", "recipe", recipe_base);
  g_key_file_set_string (kf, "Truth", "name", rc->source_name);
  g_key_file_set_string (kf, "Truth", "cloud", rc->cloud);
  g_key_file_set_double (kf, "Truth", "ra-deg", rc->ra_deg);
  g_key_file_set_double (kf, "Truth", "dec-deg", rc->dec_deg);
  g_key_file_set_double (kf, "Truth", "distance-pc", rc->distance_pc);
  g_key_file_set_double (kf, "Truth", "vsys-kms", rc->vsys_kms);
  g_key_file_set_double (kf, "Truth", "inclination-deg", rc->incl_deg);
  g_key_file_set_double (kf, "Truth", "position-angle-deg", rc->pa_deg);
  g_key_file_set_double (kf, "Truth", "tex-k", rc->tex_k);
  g_key_file_set_double (kf, "Truth", "tbg-k", rc->tbg_k);
  g_key_file_set_double (kf, "Truth", "co-abundance", rc->co_abundance);
  g_key_file_set_double (kf, "Truth", "isotope-ratio", rc->isotope_ratio);
  g_key_file_set_double (kf, "Truth", "c18o-ratio", rc->c18o_ratio);
  g_key_file_set_double (kf, "Truth", "mass-per-h2", rc->mass_per_h2);
  g_key_file_set_double (kf, "Truth", "pixel-arcsec", rc->pixel_arcsec);
  g_key_file_set_double (kf, "Truth", "channel-kms", rc->dv_kms);
  g_key_file_set_double (kf, "Truth", "ambient-mass-msun", amb);
  g_key_file_set_double (kf, "Truth", "ambient-exclude-kms", rc->amb_exclude_kms);
  g_key_file_set_comment (kf, "Truth", NULL,
                          " The true model behind the synthetic cubes. Masses in Msun, momenta in Msun km/s,\n"
                          " energies in erg, lengths in au or arcsec, velocities in km/s. '-obs' values use\n"
                          " line-of-sight velocities and projected lengths (no inclination correction),\n"
                          " '-true' values the speeds and lengths along the axis. Channel masses sit at the\n"
                          " channel-centre velocities; the '-in-range' sums cover the dossier's velocity range.",
                          NULL);

  for (guint l = 0; l < rc->lobes->len; l++)
    {
      const SynthLobe *lobe = g_ptr_array_index (rc->lobes, l);
      const LobeTruth *lt = &truths[l];
      g_autofree char *g = g_strconcat ("Lobe ", lobe->name, NULL);
      LobeSums s;

      lobe_sums (rc, lt, &s);
      g_key_file_set_string (kf, g, "kind", lobe->red ? "red" : "blue");
      g_key_file_set_double (kf, g, "mass-msun", s.mass);
      g_key_file_set_double (kf, g, "momentum-obs-msun-kms", s.p_obs);
      g_key_file_set_double (kf, g, "momentum-true-msun-kms", s.p_obs / cos_i);
      g_key_file_set_double (kf, g, "energy-obs-erg", s.e_obs_kms2 * ERG_PER_MSUN_KMS2);
      g_key_file_set_double (kf, g, "energy-true-erg", s.e_obs_kms2 * ERG_PER_MSUN_KMS2 / (cos_i * cos_i));
      g_key_file_set_double (kf, g, "mass-in-range-msun", s.mass_in);
      g_key_file_set_double (kf, g, "momentum-obs-in-range-msun-kms", s.p_obs_in);
      g_key_file_set_double (kf, g, "momentum-true-in-range-msun-kms", s.p_obs_in / cos_i);
      g_key_file_set_double (kf, g, "energy-obs-in-range-erg", s.e_obs_in_kms2 * ERG_PER_MSUN_KMS2);
      g_key_file_set_double (kf, g, "energy-true-in-range-erg",
                             s.e_obs_in_kms2 * ERG_PER_MSUN_KMS2 / (cos_i * cos_i));
      {
        double range[2] = { s.v_lo, s.v_hi };
        g_key_file_set_double_list (kf, g, "velocity-range-kms", range, 2);
      }
      g_key_file_set_double (kf, g, "rmax-obs-arcsec", lt->s_max);
      g_key_file_set_double (kf, g, "rmax-obs-au", lobe->length_au * sin_i);
      g_key_file_set_double (kf, g, "rmax-true-au", lobe->length_au);
      g_key_file_set_double (kf, g, "vmax-obs-kms", lobe->vmax_kms * cos_i);
      g_key_file_set_double (kf, g, "vmax-channel-kms", s.vmax_channel);
      g_key_file_set_double (kf, g, "vmax-true-kms", lobe->vmax_kms);
      g_key_file_set_double (kf, g, "vmin-true-kms", lobe->vmin_kms);
      g_key_file_set_double (kf, g, "gamma", lobe->gamma);
      g_key_file_set_double (kf, g, "half-opening-deg", lobe->half_opening_deg);
      g_key_file_set_double (kf, g, "half-width-arcsec", lt->w_max);
      g_key_file_set_double (kf, g, "t0-yr", lt->t0_yr);
      if (lobe->shell)
        {
          /* the shell's own truth (only for shape=shell: cone lobes keep their exact files) */
          static const char * const not_for_shells[] = {
            "momentum-true-msun-kms", "energy-true-erg", "momentum-true-in-range-msun-kms",
            "energy-true-in-range-erg", "gamma", "half-opening-deg", NULL };
          /* the speeds are not along the axis and there is no power law nor cone */
          for (guint q = 0; not_for_shells[q] != NULL; q++)
            g_key_file_remove_key (kf, g, not_for_shells[q], NULL);
          g_key_file_set_double (kf, g, "rmax-obs-au", lt->s_max * rc->distance_pc);
          g_key_file_set_string (kf, g, "shape", "shell");
          g_key_file_set_double (kf, g, "shell-c-per-arcsec", lobe->shell_c);
          g_key_file_set_double (kf, g, "inclination-deg", rc->incl_deg);
        }
      {
        /* the densest voxel of lobe gas on this lobe's side of vsys, and its optical depth in
         * each CO cube (for the opacity-correction recovery tests) */
        double hmax = 0.0;
        for (gsize k = 0; k < model->nchan; k++)
          {
            double v = rc->vstart_kms + (double) k * rc->dv_kms;
            if (lobe->red ? !(v > rc->vsys_kms) : !(v < rc->vsys_kms))
              continue;
            for (gsize i = 0; i < model->nx * model->ny; i++)
              hmax = MAX (hmax, model->lobe_h2[i * model->nchan + k]);
          }
        g_key_file_set_double (kf, g, "peak-h2-column-cm2", hmax);
        for (guint c = 0; c < rc->cubes->len; c++)
          {
            const SynthCubeSpec *spec = g_ptr_array_index (rc->cubes, c);
            g_autofree char *key = g_strconcat ("peak-tau-", spec->id, NULL);
            if (spec->line->species != EFFLUX_SPECIES_SIO)
              g_key_file_set_double (kf, g, key, cube_tau_per_h2 (rc, spec) * hmax);
          }
      }
      g_key_file_set_double_list (kf, g, "channel-velocity-kms", (double *) lt->v->data, lt->v->len);
      g_key_file_set_double_list (kf, g, "channel-mass-msun", (double *) lt->m->data, lt->m->len);
    }
  if (rc->has_jet)
    {
      g_key_file_set_double (kf, "Jet", "speed-true-kms", rc->jet_speed_kms);
      g_key_file_set_double (kf, "Jet", "speed-obs-kms", rc->jet_speed_kms * cos_i);
      g_key_file_set_double (kf, "Jet", "sio-abundance", rc->sio_abundance);
      g_key_file_set_double (kf, "Jet", "knot-mass-msun", rc->knot_mass_msun);
      for (guint j = 0, nb = 0, nr = 0; j < rc->knots->len; j++)
        {
          const SynthKnot *knot = &g_array_index (rc->knots, SynthKnot, j);
          g_autofree char *g = g_strdup_printf ("Knot %s-%u", knot->red ? "red" : "blue",
                                                knot->red ? ++nr : ++nb);
          double off, vlsr, r_au;

          knot_position (rc, &geo, knot, &off, &vlsr, &r_au);
          g_key_file_set_string (kf, g, "side", knot->red ? "red" : "blue");
          g_key_file_set_double (kf, g, "offset-arcsec", off);
          g_key_file_set_double (kf, g, "offset-au", r_au * sin_i);
          g_key_file_set_double (kf, g, "distance-true-au", r_au);
          g_key_file_set_double (kf, g, "velocity-kms", vlsr);
          g_key_file_set_double (kf, g, "velocity-obs-kms", fabs (vlsr - rc->vsys_kms));
          g_key_file_set_double (kf, g, "age-yr", knot->age_yr);
        }
    }
  for (guint c = 0; c < rc->cubes->len; c++)
    {
      const SynthCubeSpec *spec = g_ptr_array_index (rc->cubes, c);
      g_autofree char *g = g_strconcat ("Cube ", spec->id, NULL);

      g_key_file_set_string (kf, g, "path", spec->file);
      g_key_file_set_string (kf, g, "line", spec->line->name);
      g_key_file_set_string (kf, g, "unit", spec->jy_per_beam ? "Jy/beam" : "K");
      g_key_file_set_string (kf, g, "spectral", spec->freq ? "freq" : "vrad");
      g_key_file_set_double (kf, g, "rms-k", spec->rms_k);
      g_key_file_set_double (kf, g, "peak-tau", peak_tau[c]);
    }
  return g_key_file_to_data (kf, NULL, NULL);
}

/* Convex hull (Andrew's monotone chain), counter-clockwise; returns the vertex count. */
static int
cmp_point (const void *a,
           const void *b)
{
  const double *p = a, *q = b;
  if (p[0] != q[0])
    return p[0] < q[0] ? -1 : 1;
  if (p[1] != q[1])
    return p[1] < q[1] ? -1 : 1;
  return 0;
}

static double
cross (const double *o,
       const double *a,
       const double *b)
{
  return (a[0] - o[0]) * (b[1] - o[1]) - (a[1] - o[1]) * (b[0] - o[0]);
}

static int
convex_hull (double (*pts)[2],
             int      n,
             double (*hull)[2])
{
  int k = 0;

  qsort (pts, (size_t) n, sizeof pts[0], cmp_point);
  for (int i = 0; i < n; i++)
    {
      while (k >= 2 && cross (hull[k - 2], hull[k - 1], pts[i]) <= 0)
        k--;
      hull[k][0] = pts[i][0];
      hull[k][1] = pts[i][1];
      k++;
    }
  for (int i = n - 2, t = k + 1; i >= 0; i--)
    {
      while (k >= t && cross (hull[k - 2], hull[k - 1], pts[i]) <= 0)
        k--;
      hull[k][0] = pts[i][0];
      hull[k][1] = pts[i][1];
      k++;
    }
  return k - 1;
}

static void
append_icrs (GString        *s,
             const EffluxCube *grid,
             const Geometry *geo,
             double          st_s,
             double          st_t)
{
  double x, y, ra = NAN, dec = NAN;

  geometry_st_to_pixel (geo, st_s, st_t, &x, &y);
  efflux_cube_pixel_to_icrs (grid, x, y, &ra, &dec);
  g_string_append_printf (s, "%.7f,%.7f", ra, dec);
}

static const char *
role_of (const EffluxSynthRecipe *rc,
         guint                    c,
         guint                    tracer)
{
  const SynthCubeSpec *spec = g_ptr_array_index (rc->cubes, c);

  if (c == tracer)
    return "tracer";
  switch (spec->line->species)
    {
    case EFFLUX_SPECIES_13CO:
    case EFFLUX_SPECIES_C18O:
      return "isotopologue";
    case EFFLUX_SPECIES_12CO:
    case EFFLUX_SPECIES_SIO:
    default:
      return "context";
    }
}

static char *
dossier_text (const EffluxSynthRecipe *rc,
              const EffluxSynthModel  *model,
              const LobeTruth         *truths)
{
  GString *s = g_string_new (NULL);
  const SynthCubeSpec *tracer_spec;
  guint tracer = 0;
  double margin = 2.5 * rc->bmaj;   /* >= 2 beams around every lobe */
  double blue_end = 0.0, red_end = 0.0;
  g_autofree char *recipe_base = g_path_get_basename (rc->path);
  Geometry geo;

  geometry_init (&geo, rc);
  for (guint c = 0; c < rc->cubes->len; c++)
    if (((SynthCubeSpec *) g_ptr_array_index (rc->cubes, c))->line->species == EFFLUX_SPECIES_12CO)
      {
        tracer = c;
        break;
      }
  tracer_spec = g_ptr_array_index (rc->cubes, tracer);

  g_string_append_printf (s, "# Dossier of a synthetic source, written by efflux-cli synth from %s.\n"
                          "# The lobes enclose the model lobes with a margin of %.2f arcsec (%.1f beams).\n",
                          recipe_base, margin, margin / rc->bmaj);
  g_string_append (s, "[Source]\n");
  g_string_append_printf (s, "name=%s\n", rc->source_name);
  g_string_append_printf (s, "ra-deg=%.7f\ndec-deg=%.7f\n", rc->ra_deg, rc->dec_deg);
  g_string_append_printf (s, "distance-pc=%.17g\nvsys-kms=%.17g\n", rc->distance_pc, rc->vsys_kms);
  g_string_append_printf (s, "inclination-mode=fixed\ninclination-deg=%.17g\n", rc->incl_deg);
  g_string_append (s, "\n[Assumptions]\n");
  g_string_append_printf (s, "tex-k=%.17g\ntbg-k=%.17g\n", rc->tex_k, rc->tbg_k);
  g_string_append_printf (s, "co-abundance=%.17g\nisotope-ratio=%.17g\nmass-per-h2=%.17g\n",
                          rc->co_abundance, rc->isotope_ratio, rc->mass_per_h2);
  g_string_append (s, "opacity=none\ntau=0\nclip-sigma=0\n");

  for (guint c = 0; c < rc->cubes->len; c++)
    {
      const SynthCubeSpec *spec = g_ptr_array_index (rc->cubes, c);
      g_string_append_printf (s, "\n[Cube %s]\npath=%s\nline=%s\nrole=%s\nbeam-efficiency=1.0\n", spec->id,
                              spec->file, spec->line->name, role_of (rc, c, tracer));
      if (spec->rms_k > 0.0)
        g_string_append_printf (s, "rms-k=%.17g\n", spec->rms_k);
    }

  for (guint l = 0; l < rc->lobes->len; l++)
    {
      const SynthLobe *lobe = g_ptr_array_index (rc->lobes, l);
      const LobeTruth *lt = &truths[l];
      double sg = sign_of_lobe (lobe);
      double pts[12][2], hull[13][2];
      double tri[3][2] = { { 0, 0 }, { lt->s_max, lt->w_max }, { lt->s_max, -lt->w_max } };
      int n = 0, nh;
      LobeSums sums;

      lobe_sums (rc, lt, &sums);
      if (!sums.any)
        continue;
      if (lobe->red)
        red_end = MAX (red_end, lt->s_max);
      else
        blue_end = MAX (blue_end, lt->s_max);
      /* the lobe triangle grown by a square of half-side `margin` (which holds the disc) */
      for (int v = 0; v < 3; v++)
        for (int c = 0; c < 4; c++)
          {
            pts[n][0] = tri[v][0] + ((c & 1) ? margin : -margin);
            pts[n][1] = tri[v][1] + ((c & 2) ? margin : -margin);
            n++;
          }
      nh = convex_hull (pts, n, hull);
      g_string_append_printf (s, "\n[Lobe %s]\nkind=%s\ncube=%s\npolygon=", lobe->name,
                              lobe->red ? "red" : "blue", tracer_spec->id);
      for (int v = 0; v < nh; v++)
        {
          if (v > 0)
            g_string_append_c (s, ';');
          append_icrs (s, model->grid, &geo, sg * hull[v][0], sg * hull[v][1]);
        }
      g_string_append_printf (s, "\nvelocity-kms=%.4f;%.4f\n", sums.v_lo, sums.v_hi);
      g_string_append (s, "note=enclosing the model lobe; the range leaves out the ambient line\n"
                       "author=efflux-cli synth\n");
    }

  g_string_append_printf (s, "\n[Cut axis]\ncube=%s\npath=", tracer_spec->id);
  append_icrs (s, model->grid, &geo, -(red_end + margin), 0.0);
  g_string_append_c (s, ';');
  append_icrs (s, model->grid, &geo, blue_end + margin, 0.0);
  g_string_append_printf (s, "\nwidth-arcsec=%.4g\n", rc->bmaj);
  return g_string_free (s, FALSE);
}

static void
remove_written (GPtrArray *written)
{
  for (guint i = 0; i < written->len; i++)
    g_unlink (g_ptr_array_index (written, i));
}

gboolean
efflux_synth_run (const EffluxSynthRecipe *recipe,
                  const char              *out_dir,
                  GError                 **error)
{
  g_autoptr (GPtrArray) written = g_ptr_array_new_with_free_func (g_free);
  g_autofree LobeTruth *truths = g_new0 (LobeTruth, recipe->lobes->len + 1);
  g_autofree double *peak_tau = g_new0 (double, recipe->cubes->len);
  g_autoptr (EffluxSynthModel) model = NULL;
  g_autofree char *truth = NULL;
  g_autofree char *dossier = NULL;
  g_autofree char *truth_path = NULL;
  g_autofree char *dossier_path = NULL;
  gboolean created = FALSE, ok = FALSE;

  model = model_build (recipe, truths, error);
  if (model == NULL)
    goto out;

  if (!g_file_test (out_dir, G_FILE_TEST_IS_DIR))
    {
      if (g_mkdir_with_parents (out_dir, 0755) != 0)
        {
          int saved = errno;
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_IO, "%s: cannot create the output directory: %s",
                       out_dir, g_strerror (saved));
          goto out;
        }
      created = TRUE;
    }

  for (guint c = 0; c < recipe->cubes->len; c++)
    {
      const SynthCubeSpec *spec = g_ptr_array_index (recipe->cubes, c);
      g_autofree char *path = g_build_filename (out_dir, spec->file, NULL);
      g_autofree char *h1 = g_strdup_printf ("efflux synth: recipe %s, seed %" G_GUINT64_FORMAT,
                                             recipe->name, recipe->seed);
      const char *history[] = { "synthetic data of an invented source, not an observation", h1, NULL };
      EffluxFitsCubeOptions opts = { spec->freq ? EFFLUX_FITS_SPECTRAL_FREQ : EFFLUX_FITS_SPECTRAL_VRAD,
                                     spec->jy_per_beam, -32, recipe->source_name, history };
      g_autoptr (EffluxCube) cube = efflux_synth_render (recipe, model, c, error);
      double col_max = 0.0, tau1;
      gsize n = model->nx * model->ny * model->nchan;

      if (cube == NULL)
        goto out;
      /* the largest optical depth in the cube, for the truth */
      for (gsize i = 0; i < n; i++)
        {
          double col = spec->line->species == EFFLUX_SPECIES_SIO ? model->jet_h2[i]
                                                                 : model->lobe_h2[i] + model->ambient_h2[i];
          col_max = MAX (col_max, col);
        }
      tau1 = cube_tau_per_h2 (recipe, spec);
      peak_tau[c] = tau1 * col_max;

      /* no DATE card: the same recipe gives byte-identical files */
      if (!efflux_fits_write_cube_with_date (cube, path, &opts, "", error))
        goto out;
      g_ptr_array_add (written, g_steal_pointer (&path));
    }

  truth = truth_text (recipe, model, truths, peak_tau);
  truth_path = g_strdup_printf ("%s/%s.truth", out_dir, recipe->name);
  if (!efflux_write_file_atomic (truth_path, truth, -1, error))
    goto out;
  g_ptr_array_add (written, g_strdup (truth_path));

  dossier = dossier_text (recipe, model, truths);
  dossier_path = g_strdup_printf ("%s/%s.efflux", out_dir, recipe->name);
  if (!efflux_write_file_atomic (dossier_path, dossier, -1, error))
    goto out;
  g_ptr_array_add (written, g_strdup (dossier_path));
  ok = TRUE;

out:
  if (!ok)
    {
      remove_written (written);
      if (created)
        g_rmdir (out_dir);
    }
  for (guint l = 0; l < recipe->lobes->len; l++)
    lobe_truth_clear (&truths[l]);
  return ok;
}
