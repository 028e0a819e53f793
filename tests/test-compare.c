/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Comparing two dossiers of one source (efflux-compare.h, efflux-cli compare) and review notes
 * (efflux-review.h).
 *
 * The checks are analytic:
 * - Two squares of 10 x 10 pixels offset by half their side share 50 pixels: intersection over
 *   union = 50 / (100 + 100 - 50) = 1/3 exactly; offset by 2 pixels: 80 / 120 = 2/3.
 * - Mass is proportional to the pixel area, distance^2 x pixel solid angle (CONTRACT.md 4), so a
 *   dossier at twice the distance over the same number of pixels of the same brightness has 4 x
 *   the mass, momentum and energy; rmax (au) doubles with vmax unchanged, so tdyn doubles.
 * - Angular separations (efflux_sky_separation_deg, which decides whether two dossiers' source
 *   positions agree): exact cases of spherical geometry (a degree along the equator, a quarter
 *   circle, antipodes, 0.2 deg across the pole) and astropy's SkyCoord.separation for scattered
 *   pairs, from 1 mas to nearly 180 deg. */
#include "config.h"

#include <glib.h>
#include <glib/gstdio.h>
#include <math.h>
#include <string.h>

#include "efflux-compare.h"
#include "efflux-cube.h"
#include "efflux-dossier.h"
#include "efflux-review.h"
#include "efflux-sample.h"
#include "efflux-sky.h"
#include "efflux-test-util.h"

typedef struct
{
  char       *dir;
  EffluxCube *cube;
} Fixture;

/* A cube of 1 K everywhere, channels -5.5 .. 5.5 km/s, 2" pixels, written to dir/co.fits. */
static void
fixture_set_up (Fixture      *f,
                gconstpointer data)
{
  f->dir = efflux_test_tmp_dir ("efflux-compare");
  f->cube = efflux_test_write_square_cube (f->dir);
}

static void
fixture_tear_down (Fixture      *f,
                   gconstpointer data)
{
  efflux_test_remove_tree (f->dir);
  g_free (f->dir);
  efflux_cube_free (f->cube);
}

/* Mine: blue-1 (x 10..19, y 10..19) and red-1 (x 10..19, y 25..34), at 300 pc.
 * Theirs, at 600 pc: blue-1 moved by half its side (x 15..24): matched by name, IoU 1/3;
 * "R-north" = red-1 moved by 2 pixels in y: matched by overlap, IoU 2/3; "R-small" (x 18..22,
 * y 25..29) overlaps red-1 less (IoU 10/115) and stays alone; "B-far" overlaps nothing. */
static void
make_pair (Fixture *f,
           char   **mine_path,
           char   **theirs_path)
{
  g_autofree char *a = efflux_test_pixel_square (f->cube, 10, 10, 19, 19);
  g_autofree char *b = efflux_test_pixel_square (f->cube, 15, 10, 24, 19);
  g_autofree char *c = efflux_test_pixel_square (f->cube, 10, 25, 19, 34);
  g_autofree char *d = efflux_test_pixel_square (f->cube, 10, 27, 19, 36);
  g_autofree char *e = efflux_test_pixel_square (f->cube, 18, 25, 22, 29);
  g_autofree char *g = efflux_test_pixel_square (f->cube, 26, 2, 30, 6);
  g_autofree char *m1 = efflux_test_lobe_section ("blue-1", "blue", a, "-5.5;-0.5", "Me");
  g_autofree char *m2 = efflux_test_lobe_section ("red-1", "red", c, "0.5;5.5", "Me");
  g_autofree char *t1 = efflux_test_lobe_section ("R-small", "red", e, "0.5;5.5", "A. Colleague");
  g_autofree char *t2 = efflux_test_lobe_section ("blue-1", "blue", b, "-5.5;-0.5", "A. Colleague");
  g_autofree char *t3 = efflux_test_lobe_section ("R-north", "red", d, "1.5;5.5", "A. Colleague");
  g_autofree char *t4 = efflux_test_lobe_section ("B-far", "blue", g, "-5.5;-0.5", "A. Colleague");
  g_autofree char *mine = g_strconcat (m1, m2, NULL);
  g_autofree char *theirs = g_strconcat (t1, t2, t3, t4, NULL);

  *mine_path = efflux_test_write_square_dossier (f->cube, f->dir, "mine.efflux", "Compare test", 300, mine);
  *theirs_path = efflux_test_write_square_dossier (f->cube, f->dir, "theirs.efflux", "Compare test", 600, theirs);
}

static const EffluxCompareRow *
find (const EffluxComparison *c,
      const char             *mine,
      const char             *theirs)
{
  for (guint i = 0; i < c->rows->len; i++)
    {
      const EffluxCompareRow *r = g_ptr_array_index (c->rows, i);

      if (g_strcmp0 (r->mine, mine) == 0 && g_strcmp0 (r->theirs, theirs) == 0)
        return r;
    }
  g_error ("no comparison row %s / %s", mine ? mine : "-", theirs ? theirs : "-");
  return NULL;
}

static void
test_separation (void)
{
  /* exact: the sphere's geometry */
  g_assert_cmpfloat_with_epsilon (efflux_sky_separation_deg (0, 0, 1, 0), 1.0, 1e-13);
  g_assert_cmpfloat_with_epsilon (efflux_sky_separation_deg (0, 0, 0, 90), 90.0, 1e-12);
  g_assert_cmpfloat_with_epsilon (efflux_sky_separation_deg (0, 0, 180, 0), 180.0, 1e-12);
  g_assert_cmpfloat_with_epsilon (efflux_sky_separation_deg (10, 89.9, 190, 89.9), 0.2, 1e-12);
  g_assert_cmpfloat_with_epsilon (efflux_sky_separation_deg (359.9999, 0, 0.0001, 0), 0.0002, 1e-12);
  g_assert_cmpfloat (efflux_sky_separation_deg (83.8, -5.4, 83.8, -5.4), ==, 0.0);
  /* astropy.coordinates.SkyCoord.separation (Vincenty's formula as well, in astropy's own code) */
  {
    const char *code =
      "import numpy as np\n"
      "from astropy.coordinates import SkyCoord\n"
      "import astropy.units as u\n"
      "rng = np.random.default_rng(7)\n"
      "for k in range(40):\n"
      "    l1, b1 = rng.uniform(0, 360), np.degrees(np.arcsin(rng.uniform(-1, 1)))\n"
      "    d = 10.0 ** rng.uniform(-6.5, 2.25)\n"
      "    l2, b2 = (l1 + d * rng.normal()) % 360.0, float(np.clip(b1 + d * rng.normal(), -90, 90))\n"
      "    s = SkyCoord(l1 * u.deg, b1 * u.deg).separation(SkyCoord(l2 * u.deg, b2 * u.deg)).deg\n"
      "    print(repr(l1), repr(b1), repr(l2), repr(b2), repr(s))\n";
    g_autofree char *out = efflux_test_python_code (code, NULL);
    g_auto (GStrv) lines = g_strsplit (out, "\n", -1);
    guint n = 0;

    for (guint i = 0; lines[i] != NULL; i++)
      {
        double v[5];
        char *p = lines[i];

        if (*g_strstrip (lines[i]) == '\0')
          continue;
        for (int k = 0; k < 5; k++)
          v[k] = g_ascii_strtod (p, &p);
        /* within 1e-11 deg (36 micro-arcsec): both are double-precision evaluations of one formula */
        g_assert_cmpfloat_with_epsilon (efflux_sky_separation_deg (v[0], v[1], v[2], v[3]), v[4], 1e-11);
        n++;
      }
    g_assert_cmpuint (n, ==, 40);
  }
}

/* Same source: names compared without case, spaces, hyphens and underscores; the positions
 * measured and, in the comparison's notes, reported when they disagree. */
static void
test_same_source (Fixture      *f,
                  gconstpointer data)
{
  g_autofree char *mp = NULL, *tp = NULL, *text = NULL;
  g_autoptr (EffluxDossier) mine = NULL;
  g_autoptr (EffluxDossier) theirs = NULL;
  g_autoptr (EffluxComparison) c = NULL;
  g_autoptr (GError) error = NULL;
  g_autoptr (GRegex) re = NULL;
  g_autofree char *moved = NULL;
  double sep = -1.0, dec0;
  gboolean noted = FALSE;

  make_pair (f, &mp, &tp);
  mine = efflux_dossier_load (mp, &error);
  g_assert_no_error (error);
  theirs = efflux_dossier_load (tp, &error);
  g_assert_no_error (error);
  g_assert_true (efflux_compare_same_source (mine, theirs, &sep));
  g_assert_cmpfloat (sep, ==, 0.0);
  g_free (theirs->name);
  theirs->name = g_strdup ("COMPARE_test");
  g_assert_true (efflux_compare_same_source (mine, theirs, NULL));
  g_free (theirs->name);
  theirs->name = g_strdup ("Compare test B");
  g_assert_false (efflux_compare_same_source (mine, theirs, &sep));
  c = efflux_compare_dossiers (mine, theirs, NULL, &error);
  g_assert_no_error (error);
  for (guint i = 0; i < c->notes->len; i++)
    noted |= strstr (g_ptr_array_index (c->notes, i), "name is 'Compare test B', mine is 'Compare test'") != NULL;
  g_assert_true (noted);
  g_clear_pointer (&c, efflux_comparison_free);
  g_clear_pointer (&theirs, efflux_dossier_free);

  /* theirs 20 arcsec north: same name, positions apart, noted */
  dec0 = mine->dec_deg;
  text = efflux_test_read_file (tp, NULL);
  re = g_regex_new ("^dec-deg=.*$", G_REGEX_MULTILINE, 0, NULL);
  {
    char num[G_ASCII_DTOSTR_BUF_SIZE], repl[64];

    g_ascii_formatd (num, sizeof num, "%.12f", dec0 + 20.0 / 3600.0);
    g_snprintf (repl, sizeof repl, "dec-deg=%s", num);
    moved = g_regex_replace_literal (re, text, -1, 0, repl, 0, NULL);
  }
  g_assert_cmpstr (moved, !=, text);
  efflux_test_write_file (tp, moved);
  theirs = efflux_dossier_load (tp, &error);
  g_assert_no_error (error);
  g_assert_true (efflux_compare_same_source (mine, theirs, &sep));
  g_assert_cmpfloat_with_epsilon (sep, 20.0, 1e-6);
  c = efflux_compare_dossiers (mine, theirs, NULL, &error);
  g_assert_no_error (error);
  noted = FALSE;
  for (guint i = 0; i < c->notes->len; i++)
    noted |= strstr (g_ptr_array_index (c->notes, i), "lie 20.0 arcsec from mine") != NULL;
  g_assert_true (noted);
}

static void
test_compare_core (Fixture      *f,
                   gconstpointer data)
{
  g_autofree char *mp = NULL, *tp = NULL;
  g_autoptr (EffluxDossier) mine = NULL;
  g_autoptr (EffluxDossier) theirs = NULL;
  g_autoptr (EffluxComparison) c = NULL;
  g_autoptr (GError) error = NULL;
  const EffluxCompareRow *r;

  make_pair (f, &mp, &tp);
  mine = efflux_dossier_load (mp, &error);
  g_assert_no_error (error);
  theirs = efflux_dossier_load (tp, &error);
  g_assert_no_error (error);
  c = efflux_compare_dossiers (mine, theirs, NULL, &error);
  g_assert_no_error (error);
  g_assert_nonnull (c);
  g_assert_cmpuint (c->rows->len, ==, 4);   /* blue-1, red-1, then R-small and B-far alone */
  g_assert_cmpstr (c->mine_author, ==, "Me");
  g_assert_cmpstr (c->theirs_author, ==, "A. Colleague");

  /* by name; half-side offset: IoU 1/3 exactly (analytic, see the top) */
  r = find (c, "blue-1", "blue-1");
  g_assert_cmpint (r->match, ==, EFFLUX_MATCH_NAME);
  g_assert_cmpuint (r->n_mine, ==, 100);
  g_assert_cmpuint (r->n_theirs, ==, 100);
  g_assert_cmpuint (r->n_both, ==, 50);
  g_assert_cmpfloat (r->iou, ==, 1.0 / 3.0);
  g_assert_cmpfloat (r->dv1_kms, ==, 0.0);
  g_assert_cmpfloat (r->dv2_kms, ==, 0.0);
  /* distance x 2: mass, momentum, energy x 4, tdyn x 2 (CONTRACT.md 4, pixel area ~ d^2) */
  g_assert_cmpfloat_with_epsilon (r->ratio[EFFLUX_RATIO_MASS], 4.0, 1e-12);
  g_assert_cmpfloat_with_epsilon (r->ratio[EFFLUX_RATIO_MOMENTUM], 4.0, 1e-12);
  g_assert_cmpfloat_with_epsilon (r->ratio[EFFLUX_RATIO_ENERGY], 4.0, 1e-12);
  g_assert_cmpfloat_with_epsilon (r->ratio[EFFLUX_RATIO_TDYN], 2.0, 1e-12);

  /* by the largest overlap, not the first candidate: IoU 2/3 beats 10/115 */
  r = find (c, "red-1", "R-north");
  g_assert_cmpint (r->match, ==, EFFLUX_MATCH_OVERLAP);
  g_assert_cmpuint (r->n_both, ==, 80);
  g_assert_cmpfloat (r->iou, ==, 2.0 / 3.0);
  g_assert_cmpfloat (r->dv1_kms, ==, 1.0);
  g_assert_cmpfloat (r->dv2_kms, ==, 0.0);
  /* both 100 pixels of 1 K; theirs has 5 channels (1.5 .. 5.5 km/s) of my 6 (0.5 .. 5.5): 4 x 5/6 */
  g_assert_cmpfloat_with_epsilon (r->ratio[EFFLUX_RATIO_MASS], 4.0 * 5.0 / 6.0, 1e-12);
  /* momentum ~ sum |v|: (1.5 + ... + 5.5) / (0.5 + ... + 5.5) = 17.5 / 18; energy ~ sum v^2:
   * 71.25 / 71.5 */
  g_assert_cmpfloat_with_epsilon (r->ratio[EFFLUX_RATIO_MOMENTUM], 4.0 * 17.5 / 18.0, 1e-12);
  g_assert_cmpfloat_with_epsilon (r->ratio[EFFLUX_RATIO_ENERGY], 4.0 * 71.25 / 71.5, 1e-12);

  r = find (c, NULL, "R-small");
  g_assert_cmpint (r->match, ==, EFFLUX_MATCH_NONE);
  g_assert_true (isnan (r->iou));
  r = find (c, NULL, "B-far");
  g_assert_cmpint (r->match, ==, EFFLUX_MATCH_NONE);

  /* without results: the matching and overlaps only (what the desktop overlay uses) */
  {
    g_autoptr (GHashTable) cubes = g_hash_table_new (g_str_hash, g_str_equal);
    g_autoptr (EffluxComparison) c2 = NULL;

    g_hash_table_insert (cubes, (gpointer) "co", f->cube);
    c2 = efflux_compare (mine, cubes, NULL, theirs, NULL, &error);
    g_assert_no_error (error);
    g_assert_cmpfloat (find (c2, "blue-1", "blue-1")->iou, ==, 1.0 / 3.0);
    g_assert_true (isnan (find (c2, "blue-1", "blue-1")->ratio[EFFLUX_RATIO_MASS]));
    g_assert_cmpint (find (c2, "red-1", "R-north")->match, ==, EFFLUX_MATCH_OVERLAP);
  }
}

/* Replace every `from` by `to` in a file. */
static void
edit_file (const char *path,
           const char *from,
           const char *to)
{
  g_autofree char *text = NULL;
  g_auto (GStrv) parts = NULL;
  g_autofree char *joined = NULL;

  g_assert_true (g_file_get_contents (path, &text, NULL, NULL));
  parts = g_strsplit (text, from, -1);
  g_assert_cmpuint (g_strv_length (parts), >, 1);
  joined = g_strjoinv (to, parts);
  g_assert_true (g_file_set_contents (path, joined, -1, NULL));
}

/* Their dossier names a cube file that is not here (it came from another machine): measured on my
 * cube of the same id, with a note; the same numbers as above. Without a cube of the same id or
 * line, refused with their [Cube ID] named. */
static void
test_compare_their_cube_missing (Fixture      *f,
                                 gconstpointer data)
{
  g_autofree char *mp = NULL, *tp = NULL;
  g_autoptr (EffluxDossier) mine = NULL;
  g_autoptr (EffluxDossier) theirs = NULL;
  g_autoptr (EffluxDossier) other = NULL;
  g_autoptr (EffluxComparison) c = NULL;
  g_autoptr (EffluxComparison) none = NULL;
  g_autoptr (GError) error = NULL;
  const EffluxCompareRow *r;

  make_pair (f, &mp, &tp);
  edit_file (tp, "path=co.fits", "path=../far-away/co.fits");
  mine = efflux_dossier_load (mp, &error);
  g_assert_no_error (error);
  theirs = efflux_dossier_load (tp, &error);
  g_assert_no_error (error);
  c = efflux_compare_dossiers (mine, theirs, NULL, &error);
  g_assert_no_error (error);
  g_assert_cmpuint (c->notes->len, ==, 1);
  g_assert_nonnull (strstr (g_ptr_array_index (c->notes, 0), "[Cube co] ../far-away/co.fits does not exist here: measured on my cube co"));
  r = find (c, "blue-1", "blue-1");
  g_assert_cmpfloat_with_epsilon (r->ratio[EFFLUX_RATIO_MASS], 4.0, 1e-12);
  g_assert_cmpfloat_with_epsilon (r->ratio[EFFLUX_RATIO_TDYN], 2.0, 1e-12);

  edit_file (tp, "[Cube co]", "[Cube theirs-co]");
  edit_file (tp, "cube=co\n", "cube=theirs-co\n");
  edit_file (tp, "line=12CO 2-1", "line=13CO 2-1");
  other = efflux_dossier_load (tp, &error);
  g_assert_no_error (error);
  none = efflux_compare_dossiers (mine, other, NULL, &error);
  g_assert_null (none);
  g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT);
  g_assert_true (g_str_has_prefix (error->message, tp));
  g_assert_nonnull (strstr (error->message, ": [Cube theirs-co] path: "));
}

static char *
run_cli (const char * const *args,
         int                *exit_status,
         char              **err_out)
{
  char *out = NULL;

  *exit_status = efflux_test_run_cli (args, &out, err_out);
  return out;
}

static void
test_compare_cli (Fixture      *f,
                  gconstpointer data)
{
  g_autofree char *mp = NULL, *tp = NULL;
  int status = 0;

  make_pair (f, &mp, &tp);
  {
    /* my review note on their R-north shows in the last column */
    g_autofree char *text = NULL;
    g_autofree char *more = NULL;

    g_assert_true (g_file_get_contents (mp, &text, NULL, NULL));
    more = g_strconcat (text, "[Review]\nreviewer=Me\n[Review R-north]\nstatus=questioned\nnote=why 1.5?\n", NULL);
    g_assert_true (g_file_set_contents (mp, more, -1, NULL));
  }
  {
    const char *args[] = { "compare", mp, tp, "--format", "csv", NULL };
    g_autofree char *err = NULL;
    g_autofree char *out = run_cli (args, &status, &err);
    g_auto (GStrv) lines = g_strsplit (out, "\n", -1);
    g_auto (GStrv) head = NULL;
    g_auto (GStrv) blue = NULL;
    g_auto (GStrv) red = NULL;

    g_test_message ("%s", out);
    g_assert_cmpint (status, ==, 0);
    g_assert_cmpuint (g_strv_length (lines), ==, 6);   /* header, 4 rows, "" */
    g_assert_cmpstr (lines[0], ==, "lobe,theirs,kind,match,iou,dv1_kms,dv2_kms,mass_ratio,momentum_ratio,energy_ratio,tdyn_ratio,review");
    head = g_strsplit (lines[0], ",", -1);
    blue = g_strsplit (lines[1], ",", -1);
    red = g_strsplit (lines[2], ",", -1);
    g_assert_cmpuint (g_strv_length (blue), ==, 12);
    g_assert_cmpstr (blue[11], ==, "");
    g_assert_cmpstr (red[11], ==, "questioned");
    g_assert_cmpstr (blue[0], ==, "blue-1");
    g_assert_cmpstr (blue[1], ==, "blue-1");
    g_assert_cmpstr (blue[3], ==, "name");
    g_assert_cmpfloat (g_ascii_strtod (blue[4], NULL), ==, 1.0 / 3.0);   /* %.17g round-trips */
    g_assert_cmpfloat_with_epsilon (g_ascii_strtod (blue[7], NULL), 4.0, 1e-12);
    g_assert_cmpfloat_with_epsilon (g_ascii_strtod (blue[10], NULL), 2.0, 1e-12);
    g_assert_cmpstr (red[0], ==, "red-1");
    g_assert_cmpstr (red[1], ==, "R-north");
    g_assert_cmpstr (red[3], ==, "overlap");
    g_assert_cmpfloat (g_ascii_strtod (red[4], NULL), ==, 2.0 / 3.0);
    g_assert_cmpfloat (g_ascii_strtod (red[5], NULL), ==, 1.0);
    g_assert_true (g_str_has_prefix (lines[3], ",R-small,red,none,,"));
    g_assert_true (g_str_has_prefix (lines[4], ",B-far,blue,none,,"));
  }
  {
    /* text: aligned (every row as wide as the header, up to trailing blanks) and one line per lobe */
    const char *args[] = { "compare", mp, tp, NULL };
    g_autofree char *err = NULL;
    g_autofree char *out = run_cli (args, &status, &err);
    g_auto (GStrv) lines = g_strsplit (out, "\n", -1);
    const char *header = NULL;
    guint rows = 0;
    const char *col;
    gsize end = 0;

    g_test_message ("%s", out);
    g_assert_cmpint (status, ==, 0);
    for (guint i = 0; lines[i] != NULL; i++)
      {
        if (lines[i][0] == '#' || lines[i][0] == '\0')
          continue;
        if (header == NULL)
          {
            header = lines[i];
            g_assert_nonnull (strstr (header, "tdyn_ratio"));
            end = (gsize) (strstr (header, "tdyn_ratio") - header) + strlen ("tdyn_ratio");
            continue;
          }
        rows++;
        /* numbers right-aligned: every row's tdyn_ratio cell ends where the header's name ends */
        g_assert_cmpuint (strlen (lines[i]), >=, end);
        g_assert_cmpint (lines[i][end - 1], !=, ' ');
        g_assert_cmpint (lines[i][end], ==, ' ');
      }
    g_assert_cmpuint (rows, ==, 4);
    g_assert_nonnull (strstr (out, "A. Colleague"));
    col = strstr (header, "iou");
    g_assert_nonnull (col);
    g_assert_true (g_str_has_prefix (lines[4], "blue-1"));
    g_assert_nonnull (strstr (lines[4], "0.3333"));
    g_assert_nonnull (strstr (lines[5], "0.6667"));
    g_assert_true (g_str_has_suffix (lines[5], "  questioned"));
  }
  {
    const char *args[] = { "compare", mp, tp, "--format", "json", NULL };
    g_autofree char *err = NULL;
    g_autofree char *out = run_cli (args, &status, &err);

    g_assert_cmpint (status, ==, 0);
    g_assert_nonnull (strstr (out, "\"lobe\": \"blue-1\", \"theirs\": \"blue-1\", \"kind\": \"blue\", \"match\": \"name\", \"iou\": 0.33333333333333331"));
    g_assert_nonnull (strstr (out, "\"lobe\": null, \"theirs\": \"B-far\""));
    g_assert_nonnull (strstr (out, "\"tdyn_ratio\": null, \"review\": null"));
    g_assert_nonnull (strstr (out, "\"review\": \"questioned\""));
  }
  {
    const char *args[] = { "compare", mp, "--format", "xml", tp, NULL };
    g_autofree char *err = NULL;
    g_autofree char *out = run_cli (args, &status, &err);

    g_assert_cmpint (status, ==, 2);
    g_assert_cmpstr (err, ==, "efflux-cli: error: compare: --format xml: expected text, csv or json (see 'efflux-cli compare --help')\n");
  }
  {
    g_autofree char *missing = g_build_filename (f->dir, "nothing.efflux", NULL);
    const char *args[] = { "compare", mp, missing, NULL };
    g_autofree char *err = NULL;
    g_autofree char *out = run_cli (args, &status, &err);

    g_assert_cmpint (status, ==, 1);
    g_assert_true (g_str_has_prefix (err, "efflux-cli: error: "));
    g_assert_nonnull (strstr (err, "nothing.efflux"));
    g_assert_nonnull (strchr (err, '\n'));
    g_assert_cmpint (strchr (err, '\n')[1], ==, '\0');
  }
}

/* Review notes: written, saved, read back; comments and other groups kept; bad status refused. */
static void
test_review_notes (Fixture      *f,
                   gconstpointer data)
{
  g_autofree char *mp = NULL, *tp = NULL;
  g_autoptr (EffluxDossier) mine = NULL;
  g_autoptr (EffluxDossier) again = NULL;
  g_autoptr (EffluxReview) rv = NULL;
  g_autoptr (GError) error = NULL;
  g_autofree char *text = NULL;
  const EffluxReviewNote *n;

  make_pair (f, &mp, &tp);
  mine = efflux_dossier_load (mp, &error);
  g_assert_no_error (error);
  rv = efflux_review_read (mine, &error);
  g_assert_no_error (error);
  g_assert_cmpuint (rv->notes->len, ==, 0);
  g_assert_null (rv->reviewer);
  g_clear_pointer (&rv, efflux_review_free);

  efflux_review_set_reviewer (mine, "B. Reviewer", tp);
  efflux_review_set_note (mine, "blue-1", EFFLUX_REVIEW_QUESTIONED, "takes in the ambient\ncloud", "blue-1");
  efflux_review_set_note (mine, "R-north", EFFLUX_REVIEW_AGREED, "", "red-1");
  efflux_review_set_note (mine, "B-far", EFFLUX_REVIEW_CHANGED, "dropped", NULL);
  efflux_review_set_note (mine, "R-small", EFFLUX_REVIEW_AGREED, "", NULL);
  g_assert_true (efflux_review_remove_note (mine, "R-small"));
  g_assert_false (efflux_review_remove_note (mine, "R-small"));
  g_assert_true (efflux_dossier_set_lobe_author (mine, "red-1", "B. Reviewer", &error));
  g_assert_no_error (error);
  g_assert_false (efflux_dossier_set_lobe_note (mine, "nope", "x", &error));
  g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT);
  g_assert_nonnull (strstr (error->message, "[Lobe nope]"));
  g_clear_error (&error);
  g_assert_true (efflux_dossier_save (mine, mp, &error));
  g_assert_no_error (error);

  g_assert_true (g_file_get_contents (mp, &text, NULL, &error));
  g_assert_nonnull (strstr (text, "# a comment that must survive"));
  g_assert_nonnull (strstr (text, "[Review]\nreviewer=B. Reviewer\nreviewed=theirs.efflux\n"));
  again = efflux_dossier_load (mp, &error);
  g_assert_no_error (error);
  g_assert_cmpstr (efflux_dossier_find_lobe (again, "red-1")->author, ==, "B. Reviewer");
  rv = efflux_review_read (again, &error);
  g_assert_no_error (error);
  g_assert_cmpstr (rv->reviewer, ==, "B. Reviewer");
  g_assert_cmpstr (rv->reviewed, ==, "theirs.efflux");
  g_assert_cmpstr (rv->reviewed_abs, ==, tp);
  g_assert_cmpuint (rv->notes->len, ==, 3);
  n = efflux_review_find (rv, "blue-1");
  g_assert_cmpint (n->status, ==, EFFLUX_REVIEW_QUESTIONED);
  g_assert_cmpstr (n->note, ==, "takes in the ambient cloud");
  g_assert_cmpstr (n->mine, ==, "blue-1");
  g_assert_nonnull (n->date);
  g_assert_cmpuint (strlen (n->date), ==, 20);
  n = efflux_review_find (rv, "B-far");
  g_assert_cmpint (n->status, ==, EFFLUX_REVIEW_CHANGED);
  g_assert_null (n->mine);
  g_assert_cmpint (efflux_review_find (rv, "R-north")->status, ==, EFFLUX_REVIEW_AGREED);
  g_assert_null (efflux_review_find (rv, "R-small"));
  g_clear_pointer (&rv, efflux_review_free);
  /* the sample's Sources list sees the reviewer's dossier as reviewed (efflux-sample.h) */
  g_assert_cmpint (efflux_sample_state (again->keyfile), ==, EFFLUX_SOURCE_REVIEWED);
  g_assert_nonnull (strstr (text, "[Status]\nreviewed-by=B. Reviewer\n"));

  /* a bad status names the file, the group and the key */
  g_key_file_set_value (again->keyfile, "Review blue-1", "status", "maybe");
  rv = efflux_review_read (again, &error);
  g_assert_null (rv);
  g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT);
  {
    g_autofree char *want = g_strdup_printf ("%s: [Review blue-1] status: expected agreed, questioned or changed, got 'maybe'", mp);
    g_assert_cmpstr (error->message, ==, want);
  }
}

int
main (int    argc,
      char **argv)
{
  g_test_init (&argc, &argv, NULL);
  g_test_add_func ("/compare/separation", test_separation);
  g_test_add ("/compare/same-source", Fixture, NULL, fixture_set_up, test_same_source, fixture_tear_down);
  g_test_add ("/compare/core", Fixture, NULL, fixture_set_up, test_compare_core, fixture_tear_down);
  g_test_add ("/compare/their-cube-missing", Fixture, NULL, fixture_set_up, test_compare_their_cube_missing, fixture_tear_down);
  g_test_add ("/compare/cli", Fixture, NULL, fixture_set_up, test_compare_cli, fixture_tear_down);
  g_test_add ("/compare/review-notes", Fixture, NULL, fixture_set_up, test_review_notes, fixture_tear_down);
  return g_test_run ();
}
