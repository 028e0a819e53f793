/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The wind-driven shell fitted to a cut's PV emission; the method is described in
 * efflux-shellfit.h. */

#include "efflux-shellfit.h"
#include "efflux-constants.h"
#include "efflux-cube.h"
#include "efflux-kinematics.h"

#include <math.h>
#include <string.h>

#define DEG (G_PI / 180.0)
#define A_MIN (0.5 * DEG)
#define A_MAX (89.5 * DEG)
#define SPUR_MODEL 0.25
#define SPUR_FLUX 0.5
#define SPUR_SPAN 0.3
/* the lag window of the covariance along the velocity, in channels */
#define SANDWICH_LAG_V 2

typedef struct
{
  double x, u, w;     /* local frame: offset along the lobe, velocity away from vsys in the lobe's sense */
  int    col;         /* PV offset column */
  int    chan;        /* PV channel */
  double rho;         /* current foot point */
  gboolean use;
} Point;

typedef struct
{
  Point  *pts;
  gsize   n;
  double  rx, ru;     /* resolution units */
} Data;

void
efflux_shell_model (double  rho,
                    double  inclination_deg,
                    double  c_per_arcsec,
                    double  kms_per_arcsec,
                    double *x_arcsec,
                    double *u_kms)
{
  double a = (90.0 - inclination_deg) * DEG;

  *x_arcsec = c_per_arcsec * rho * rho * cos (a) - rho * sin (a);
  *u_kms = kms_per_arcsec * (c_per_arcsec * rho * rho * sin (a) + rho * cos (a));
}

/* Squared normalised distance of point (x, u) to the curve point at rho, and its first and second
 * derivatives in rho. */
static double
dist2 (const double *p,
       double        rho,
       double        x,
       double        u,
       double        rx,
       double        ru,
       double       *d1,
       double       *d2)
{
  double a = p[0], k = exp (p[1]), c = exp (p[2]);
  double ca = cos (a), sa = sin (a);
  double X = c * rho * rho * ca - rho * sa, U = k * (c * rho * rho * sa + rho * ca);
  double X1 = 2.0 * c * rho * ca - sa, U1 = k * (2.0 * c * rho * sa + ca);
  double X2 = 2.0 * c * ca, U2 = 2.0 * k * c * sa;
  double dx = (X - x) / rx, du = (U - u) / ru;

  if (d1 != NULL)
    *d1 = 2.0 * (dx * X1 / rx + du * U1 / ru);
  if (d2 != NULL)
    *d2 = 2.0 * (X1 * X1 / (rx * rx) + U1 * U1 / (ru * ru) + dx * X2 / rx + du * U2 / ru);
  return dx * dx + du * du;
}

static double
newton_foot (const double *p,
             double        rho,
             double        x,
             double        u,
             double        rx,
             double        ru,
             double        lim)
{
  rho = CLAMP (rho, -lim, lim);
  for (int it = 0; it < 20; it++)
    {
      double d1, d2, step;
      double f = dist2 (p, rho, x, u, rx, ru, &d1, &d2);

      if (d2 > 0.0)
        step = -d1 / d2;
      else
        step = -d1 * 1e-3;
      /* never move to a worse point: halve */
      for (int h = 0; h < 30; h++)
        {
          if (dist2 (p, rho + step, x, u, rx, ru, NULL, NULL) <= f)
            break;
          step *= 0.5;
        }
      step = CLAMP (rho + step, -lim, lim) - rho;
      rho += step;
      if (fabs (step) < 1e-10 * (1.0 + fabs (rho)))
        break;
    }
  return rho;
}

/* The nearest curve point to (x, u): Newton from several starts (the point's radius in the shell's
 * own frame; the roots of X(rho) = x and of U(rho) = u; the previous foot point). */
static double
foot_point (const double *p,
            double        x,
            double        u,
            double        rx,
            double        ru,
            double        prev,
            double        lim,
            double       *d2_out)
{
  double a = p[0], k = exp (p[1]), c = exp (p[2]);
  double ca = cos (a), sa = sin (a), uk = u / k;
  double starts[6];
  int ns = 0;
  double best = NAN, best_d = G_MAXDOUBLE;

  starts[ns++] = -x * sa + uk * ca;
  if (isfinite (prev))
    starts[ns++] = prev;
  {
    /* c ca rho^2 - sa rho - x = 0 */
    double disc = sa * sa + 4.0 * c * ca * x;
    if (disc >= 0.0 && c * ca > 0.0)
      {
        starts[ns++] = (sa + sqrt (disc)) / (2.0 * c * ca);
        starts[ns++] = (sa - sqrt (disc)) / (2.0 * c * ca);
      }
  }
  {
    /* c sa rho^2 + ca rho - uk = 0 */
    double disc = ca * ca + 4.0 * c * sa * uk;
    if (disc >= 0.0 && c * sa > 0.0)
      {
        starts[ns++] = (-ca + sqrt (disc)) / (2.0 * c * sa);
        starts[ns++] = (-ca - sqrt (disc)) / (2.0 * c * sa);
      }
  }
  for (int s = 0; s < ns; s++)
    {
      double r = newton_foot (p, starts[s], x, u, rx, ru, lim);
      double d = dist2 (p, r, x, u, rx, ru, NULL, NULL);
      if (d < best_d)
        {
          best_d = d;
          best = r;
        }
    }
  *d2_out = best_d;
  return best;
}

/* ---- forward model of the PV image (see the header) ---- */

#define MODEL_NZ 120
#define MODEL_NPHI 64
#define NPAR 5
/* the largest fraction of the shell missing at its base (z_min / z_max) */
#define ZMIN_MAX 0.8

typedef struct
{
  const EffluxPv *pv;
  int      side;
  double   sv, vsys, src, vmin;
  double   sig_x_pix;          /* beam sigma along the cut, in PV columns */
  double   sig_t;              /* across the cut: beam and width (arcsec) */
  double   res_x_pix;          /* the beam's FWHM along the cut, in PV columns */
  gboolean *col_ok;            /* columns fitted (this side, not a spur) */
  float   *model;              /* ncol x nchan scratch */
  double   amp;                /* the scale of the last evaluation */
  guint    n_res;
} Image;

static void
render (Image        *im,
        const double *p)
{
  const EffluxPv *pv = im->pv;
  gsize ncol = pv->n_offsets, nchan = pv->nchan;
  double a = p[0], k = exp (p[1]), c = exp (p[2]), zmax = exp (p[3]), fmin = p[4];
  double ca = cos (a), sa = sin (a);
  int reach = (int) ceil (3.0 * im->sig_x_pix);

  double is2 = 1.0 / (im->sig_x_pix * im->sig_x_pix), step = exp (-is2);
  double cphi[MODEL_NPHI], sphi[MODEL_NPHI];

  for (int ip = 0; ip < MODEL_NPHI; ip++)
    {
      double phi = 2.0 * G_PI * (ip + 0.5) / MODEL_NPHI;
      cphi[ip] = cos (phi);
      sphi[ip] = sin (phi);
    }
  memset (im->model, 0, ncol * nchan * sizeof (float));
  for (int iz = 0; iz < MODEL_NZ; iz++)
    {
      double z = zmax * (fmin + (1.0 - fmin) * (iz + 0.5) / MODEL_NZ), rr = sqrt (z / c);
      for (int ip = 0; ip < MODEL_NPHI; ip++)
        {
          double rho = rr * cphi[ip], t = rr * sphi[ip];
          double wt = exp (-0.5 * t * t / (im->sig_t * im->sig_t));
          double X = z * ca - rho * sa, U = k * (z * sa + rho * ca);
          double xc = (im->src + im->side * X) / pv->offset_step_arcsec;
          double v = im->vsys + im->sv * U, f = (v - pv->v0_kms) / pv->dv_kms, wf;
          gssize k0 = (gssize) floor (f), c0 = (gssize) floor (xc);
          double d, g, ratio;

          if (wt < 1e-3)
            continue;
          wf = f - (double) k0;
          /* the Gaussian along the cut by recurrence: g(q + 1) = g(q) exp (-(2 d + 1) / (2 s^2)),
           * the ratio itself shrinking by exp (-1 / s^2) per column (d = q - xc) */
          d = (double) (c0 - reach) - xc;
          g = wt * exp (-0.5 * d * d * is2);
          ratio = exp (-(2.0 * d + 1.0) * 0.5 * is2);
          for (gssize q = c0 - reach; q <= c0 + reach + 1; q++, g *= ratio, ratio *= step)
            {
              if (q < 0 || q >= (gssize) ncol)
                continue;
              if (k0 >= 0 && k0 < (gssize) nchan)
                im->model[(gsize) k0 * ncol + (gsize) q] += (float) (g * (1.0 - wf));
              if (k0 + 1 >= 0 && k0 + 1 < (gssize) nchan)
                im->model[(gsize) (k0 + 1) * ncol + (gsize) q] += (float) (g * wf);
            }
        }
    }
}

static gboolean
pixel_used (const Image *im,
            gsize        col,
            gsize        chan)
{
  const EffluxPv *pv = im->pv;
  double x = (double) col * pv->offset_step_arcsec - im->src;

  return im->col_ok[col] && im->side * x > 0.0 && fabs (pv->velocity[chan] - im->vsys) >= im->vmin
         && isfinite (pv->data[chan * pv->n_offsets + col]);
}

/* Residuals D - A M over the pixels used (res may be NULL); returns their sum of squares. */
static double
image_residuals (Image        *im,
                 const double *p,
                 double       *res)
{
  const EffluxPv *pv = im->pv;
  double sdm = 0.0, smm = 0.0, chi2 = 0.0;
  guint n = 0;

  render (im, p);
  for (gsize k = 0; k < pv->nchan; k++)
    for (gsize i = 0; i < pv->n_offsets; i++)
      if (pixel_used (im, i, k))
        {
          double d = pv->data[k * pv->n_offsets + i], m = im->model[k * pv->n_offsets + i];
          sdm += d * m;
          smm += m * m;
        }
  im->amp = smm > 0.0 ? MAX (sdm / smm, 0.0) : 0.0;
  for (gsize k = 0; k < pv->nchan; k++)
    for (gsize i = 0; i < pv->n_offsets; i++)
      if (pixel_used (im, i, k))
        {
          double r = pv->data[k * pv->n_offsets + i] - im->amp * im->model[k * pv->n_offsets + i];
          if (res != NULL)
            res[n] = r;
          chi2 += r * r;
          n++;
        }
  im->n_res = n;
  return chi2;
}

static void
clamp_params (double *p)
{
  p[0] = CLAMP (p[0], A_MIN, A_MAX);
  p[1] = CLAMP (p[1], -20.0, 20.0);
  p[2] = CLAMP (p[2], -20.0, 20.0);
  p[3] = CLAMP (p[3], -20.0, 20.0);
  p[4] = CLAMP (p[4], 0.0, ZMIN_MAX);
}

static double
nm_cost (Image  *im,
         double *p)
{
  clamp_params (p);
  return image_residuals (im, p, NULL);
}

/* Nelder-Mead on the four parameters from p (in/out); returns the cost. */
static double
nelder_mead (Image  *im,
             double *p,
             const double *step)
{
  double x[NPAR + 1][NPAR], f[NPAR + 1];

  for (int v = 0; v <= NPAR; v++)
    {
      memcpy (x[v], p, sizeof x[v]);
      if (v > 0)
        x[v][v - 1] += step[v - 1];
      f[v] = nm_cost (im, x[v]);
    }
  for (int it = 0; it < 600; it++)
    {
      int hi = 0, lo = 0, nh = 0;
      double cen[NPAR] = { 0 }, xr[NPAR], fr;

      for (int v = 1; v <= NPAR; v++)
        {
          if (f[v] > f[hi])
            hi = v;
          if (f[v] < f[lo])
            lo = v;
        }
      nh = lo;
      for (int v = 0; v <= NPAR; v++)
        if (v != hi && f[v] > f[nh])
          nh = v;
      if (fabs (f[hi] - f[lo]) <= 1e-9 * (fabs (f[lo]) + 1e-30))
        break;
      for (int v = 0; v <= NPAR; v++)
        if (v != hi)
          for (int q = 0; q < NPAR; q++)
            cen[q] += x[v][q] / NPAR;
      for (int q = 0; q < NPAR; q++)
        xr[q] = cen[q] + (cen[q] - x[hi][q]);
      fr = nm_cost (im, xr);
      if (fr < f[lo])
        {
          double xe[NPAR], fe;
          for (int q = 0; q < NPAR; q++)
            xe[q] = cen[q] + 2.0 * (cen[q] - x[hi][q]);
          fe = nm_cost (im, xe);
          if (fe < fr)
            {
              memcpy (x[hi], xe, sizeof xe);
              f[hi] = fe;
            }
          else
            {
              memcpy (x[hi], xr, sizeof xr);
              f[hi] = fr;
            }
        }
      else if (fr < f[nh])
        {
          memcpy (x[hi], xr, sizeof xr);
          f[hi] = fr;
        }
      else
        {
          double xc[NPAR], fc;
          for (int q = 0; q < NPAR; q++)
            xc[q] = cen[q] + 0.5 * (x[hi][q] - cen[q]);
          fc = nm_cost (im, xc);
          if (fc < f[hi])
            {
              memcpy (x[hi], xc, sizeof xc);
              f[hi] = fc;
            }
          else
            for (int v = 0; v <= NPAR; v++)
              if (v != lo)
                {
                  for (int q = 0; q < NPAR; q++)
                    x[v][q] = x[lo][q] + 0.5 * (x[v][q] - x[lo][q]);
                  f[v] = nm_cost (im, x[v]);
                }
        }
    }
  {
    int lo = 0;
    for (int v = 1; v <= NPAR; v++)
      if (f[v] < f[lo])
        lo = v;
    memcpy (p, x[lo], sizeof x[lo]);
    return f[lo];
  }
}

/* Solve m x = b for n <= NPAR (Gauss-Jordan with pivoting); FALSE when singular. */
static gboolean
solve_n (int    n,
         double m[NPAR][NPAR],
         double *b,
         double *x)
{
  double a[NPAR][NPAR + 1];

  for (int i = 0; i < n; i++)
    {
      for (int j = 0; j < n; j++)
        a[i][j] = m[i][j];
      a[i][n] = b[i];
    }
  for (int c = 0; c < n; c++)
    {
      int piv = c;
      for (int r = c + 1; r < n; r++)
        if (fabs (a[r][c]) > fabs (a[piv][c]))
          piv = r;
      if (!(fabs (a[piv][c]) > 0.0))
        return FALSE;
      for (int j = 0; j <= n; j++)
        {
          double t = a[c][j];
          a[c][j] = a[piv][j];
          a[piv][j] = t;
        }
      for (int r = 0; r < n; r++)
        if (r != c)
          {
            double fct = a[r][c] / a[c][c];
            for (int j = c; j <= n; j++)
              a[r][j] -= fct * a[c][j];
          }
    }
  for (int i = 0; i < n; i++)
    x[i] = a[i][n] / a[i][i];
  return TRUE;
}

/* The covariance of correlated residuals (see the header): cov holds (J^T J)^-1 on entry and
 * (J^T J)^-1 B (J^T J)^-1 on return, with B = sum over pixel pairs a, b no further apart than the
 * lag window of w(a - b) r_a r_b J_a J_b^T, w the product of Bartlett (triangular) weights along
 * the offset and the velocity (Newey & West 1987, Econometrica 55, 703, in two dimensions), times
 * n / (n - 4) for the four parameters fitted. */
static void
sandwich (const Image  *im,
          const double *r,
          const double *jac,
          guint         nres,
          double        cov[NPAR][NPAR])
{
  const EffluxPv *pv = im->pv;
  gsize ncol = pv->n_offsets, nchan = pv->nchan;
  g_autofree gint *index = g_new (gint, ncol * nchan);
  g_autofree gint *col = g_new (gint, MAX (nres, 1));
  g_autofree gint *chan = g_new (gint, MAX (nres, 1));
  /* the lag window: two beams along the offset, SANDWICH_LAG_V channels along the velocity */
  int lx = (int) ceil (2.0 * im->res_x_pix), lv = SANDWICH_LAG_V;
  double b[NPAR][NPAR] = { { 0 } }, tmp[NPAR][NPAR] = { { 0 } }, out[NPAR][NPAR] = { { 0 } };
  guint n = 0;

  for (gsize q = 0; q < ncol * nchan; q++)
    index[q] = -1;
  for (gsize k = 0; k < nchan; k++)
    for (gsize i = 0; i < ncol; i++)
      if (pixel_used (im, i, k) && n < nres)
        {
          index[k * ncol + i] = (gint) n;
          col[n] = (gint) i;
          chan[n] = (gint) k;
          n++;
        }
  for (guint a = 0; a < n; a++)
    for (int dk = -lv; dk <= lv; dk++)
      for (int dx = -lx; dx <= lx; dx++)
        {
          gssize kk = chan[a] + dk, ii = col[a] + dx;
          double w, rr;
          gint bi;

          if (kk < 0 || kk >= (gssize) nchan || ii < 0 || ii >= (gssize) ncol)
            continue;
          bi = index[(gsize) kk * ncol + (gsize) ii];
          if (bi < 0)
            continue;
          w = (1.0 - fabs ((double) dx) / (lx + 1.0)) * (1.0 - fabs ((double) dk) / (lv + 1.0));
          rr = w * r[a] * r[bi];
          for (int p = 0; p < NPAR; p++)
            for (int q = 0; q < NPAR; q++)
              b[p][q] += rr * jac[(gsize) a * NPAR + p] * jac[(gsize) bi * NPAR + q];
        }
  for (int p = 0; p < NPAR; p++)
    for (int q = 0; q < NPAR; q++)
      for (int m = 0; m < NPAR; m++)
        tmp[p][q] += cov[p][m] * b[m][q];
  for (int p = 0; p < NPAR; p++)
    for (int q = 0; q < NPAR; q++)
      {
        for (int m = 0; m < NPAR; m++)
          out[p][q] += tmp[p][m] * cov[m][q];
        out[p][q] *= n > NPAR ? (double) n / (double) (n - NPAR) : 1.0;
      }
  memcpy (cov, out, sizeof out);
}

/* Finite-difference Jacobian of the residuals at p (nres x NPAR, row-major) and the residuals. */
static void
jacobian (Image        *im,
          const double *p,
          double       *r0,
          double       *r1,
          double       *jac)
{
  guint nres;

  image_residuals (im, p, r0);
  nres = im->n_res;
  for (int q = 0; q < NPAR; q++)
    {
      double pp[NPAR], h = q == 0 ? 0.2 * DEG : 0.01;
      memcpy (pp, p, sizeof pp);
      /* z_min / z_max stays inside [0, ZMIN_MAX] */
      if (q == 4 && pp[q] + h > ZMIN_MAX)
        h = -h;
      pp[q] += h;
      image_residuals (im, pp, r1);
      for (guint j = 0; j < nres; j++)
        jac[(gsize) j * NPAR + q] = (r1[j] - r0[j]) / h;
    }
  image_residuals (im, p, NULL);
}

/* Nelder-Mead stops where its simplex shrinks, not exactly at the minimum, which adds its own
 * scatter to the parameters: a few Gauss-Newton steps from there (each accepted only when it
 * lowers the sum of squares, halving the step up to 5 times). Returns the sum of squares. */
static double
gauss_newton (Image  *im,
              double *p,
              double  chi2)
{
  guint nres;
  g_autofree double *r0 = NULL;
  g_autofree double *r1 = NULL;
  g_autofree double *jac = NULL;

  image_residuals (im, p, NULL);
  nres = im->n_res;
  r0 = g_new (double, MAX (nres, 1));
  r1 = g_new (double, MAX (nres, 1));
  jac = g_new (double, (gsize) MAX (nres, 1) * NPAR);
  for (int it = 0; it < 4; it++)
    {
      double jtj[NPAR][NPAR] = { { 0 } }, g[NPAR] = { 0 }, delta[NPAR], dmax = 0.0;
      gboolean better = FALSE;

      jacobian (im, p, r0, r1, jac);
      if (im->n_res != nres)
        break;
      for (guint j = 0; j < nres; j++)
        for (int a = 0; a < NPAR; a++)
          {
            g[a] -= jac[(gsize) j * NPAR + a] * r0[j];
            for (int b = 0; b < NPAR; b++)
              jtj[a][b] += jac[(gsize) j * NPAR + a] * jac[(gsize) j * NPAR + b];
          }
      for (int a = 0; a < NPAR; a++)
        dmax = MAX (dmax, jtj[a][a]);
      jtj[4][4] += 1e-9 * dmax;
      if (!solve_n (NPAR, jtj, g, delta))
        break;
      for (int h = 0; h < 6 && !better; h++, delta[0] *= 0.5, delta[1] *= 0.5, delta[2] *= 0.5,
           delta[3] *= 0.5, delta[4] *= 0.5)
        {
          double q[NPAR], f;
          for (int a = 0; a < NPAR; a++)
            q[a] = p[a] + delta[a];
          f = nm_cost (im, q);
          if (f < chi2)
            {
              better = chi2 - f > 1e-10 * chi2;
              memcpy (p, q, sizeof q);
              chi2 = f;
              if (!better)
                return chi2;
            }
        }
      if (!better)
        break;
    }
  return chi2;
}

static gboolean
fit_lobe (const EffluxPv     *pv,
          Data               *data,
          Image              *im,
          EffluxShellLobeFit *lf,
          double              distance_pc,
          double              n_corr)
{
  double p[NPAR], best = G_MAXDOUBLE, xtip = 0.0, umax = 0.0, chi2;
  double step[NPAR] = { 5.0 * DEG, 0.3, 0.5, 0.2, 0.05 };
  double cov[NPAR][NPAR];
  guint n_used = 0;

  for (gsize j = 0; j < data->n; j++)
    if (data->pts[j].use)
      {
        n_used++;
        xtip = MAX (xtip, data->pts[j].x);
        umax = MAX (umax, fabs (data->pts[j].u));
      }
  lf->n_pixels = n_used;
  if ((double) n_used / n_corr < 8.0 || !(xtip > 0.0) || !(umax > 0.0))
    {
      g_free (lf->message);
      lf->message = g_strdup_printf ("%u pixels above the threshold: too few for the shell's parameters",
                                     n_used);
      return FALSE;
    }

  /* start: a grid over i, k and the shell's width at the tip */
  for (int ii = 1; ii <= 17; ii++)
    for (int ik = 0; ik <= 8; ik++)
      for (int ic = 0; ic < 5; ic++)
        {
          static const double width[5] = { 0.1, 0.2, 0.35, 0.6, 1.0 };
          double a = (90.0 - ii * 5.0) * DEG, q[NPAR], f;
          double zmax = xtip / MAX (cos (a), 0.2);
          q[0] = a;
          q[1] = log (umax / xtip * pow (10.0, -1.0 + 2.0 * ik / 8.0));
          q[2] = log (1.0 / (width[ic] * width[ic] * zmax));
          q[3] = log (zmax);
          q[4] = 0.0;
          f = nm_cost (im, q);
          if (f < best)
            {
              best = f;
              memcpy (p, q, sizeof q);
            }
        }
  nelder_mead (im, p, step);
  chi2 = nelder_mead (im, p, step);   /* a restart against early collapse of the simplex */
  chi2 = gauss_newton (im, p, chi2);

  /* covariance from the Jacobian of the residuals */
  {
    guint nres;
    g_autofree double *r0 = NULL;
    g_autofree double *r1 = NULL;
    g_autofree double *jac = NULL;
    double jtj[NPAR][NPAR] = { { 0 } };

    image_residuals (im, p, NULL);
    nres = im->n_res;
    r0 = g_new (double, nres);
    r1 = g_new (double, nres);
    jac = g_new (double, (gsize) nres * NPAR);
    jacobian (im, p, r0, r1, jac);
    for (guint j = 0; j < nres; j++)
      for (int a = 0; a < NPAR; a++)
        for (int b = 0; b < NPAR; b++)
          jtj[a][b] += jac[(gsize) j * NPAR + a] * jac[(gsize) j * NPAR + b];
    /* a base the data do not constrain (left out by vmin) must not make the others singular:
     * a ridge far below any constrained direction */
    {
      double dmax = 0.0;
      for (int a = 0; a < NPAR; a++)
        dmax = MAX (dmax, jtj[a][a]);
      jtj[4][4] += 1e-9 * dmax;
    }
    for (int c = 0; c < NPAR; c++)
      {
        double e[NPAR] = { 0 }, col[NPAR];
        double mm[NPAR][NPAR];
        e[c] = 1.0;
        memcpy (mm, jtj, sizeof mm);
        if (!solve_n (NPAR, mm, e, col))
          {
            g_free (lf->message);
            lf->message = g_strdup ("the fit is degenerate (its covariance matrix is singular)");
            return FALSE;
          }
        for (int a = 0; a < NPAR; a++)
          cov[a][c] = col[a];
      }
    /* residual variance, the pixels per beam along the cut counted as one (common practice) */
    sandwich (im, r0, jac, nres, cov);
    (void) chi2;
    lf->inclination_deg = 90.0 - p[0] / DEG;
    lf->inclination_err_deg = sqrt (MAX (cov[0][0], 0.0)) / DEG;
    lf->kms_per_arcsec = exp (p[1]);
    lf->age_yr = distance_pc * EFFLUX_AU / EFFLUX_KM / lf->kms_per_arcsec / EFFLUX_YR;
    lf->age_err_yr = lf->age_yr * sqrt (MAX (cov[1][1], 0.0));
    lf->c_per_arcsec = exp (p[2]);
    lf->c_err_per_arcsec = lf->c_per_arcsec * sqrt (MAX (cov[2][2], 0.0));
    lf->z_max_arcsec = exp (p[3]);
    lf->z_min_arcsec = p[4] * lf->z_max_arcsec;
    lf->rho_max = sqrt (lf->z_max_arcsec / lf->c_per_arcsec);
    lf->rho_min = -lf->rho_max;
  }
  /* the emission-weighted rms distance of the pixels to the curve (resolution units) */
  {
    double q3[3] = { p[0], p[1], p[2] }, sw = 0.0, sd = 0.0;
    for (gsize j = 0; j < data->n; j++)
      if (data->pts[j].use)
        {
          double d2;
          foot_point (q3, data->pts[j].x, data->pts[j].u, data->rx, data->ru, NAN, lf->rho_max, &d2);
          sw += data->pts[j].w;
          sd += data->pts[j].w * d2;
        }
    lf->rms_distance = sqrt (sd / sw);
  }
  g_clear_pointer (&lf->message, g_free);
  (void) pv;
  return TRUE;
}

/* Columns mostly off the curve with a broad velocity extent: spurs. Marks their points unused.
 * Returns the number of spurs found. */
static guint
find_spurs (const EffluxPv     *pv,
            Data               *data,
            Image              *im,
            EffluxShellLobeFit *lf,
            double              source_offset,
            double              vsys,
            double              sv)
{
  gsize ncol = pv->n_offsets;
  g_autofree double *flux = g_new0 (double, ncol);
  g_autofree double *off = g_new0 (double, ncol);
  g_autofree double *umin = g_new (double, ncol);
  g_autofree double *umax = g_new (double, ncol);
  g_autofree gboolean *bad = g_new0 (gboolean, ncol);
  double p[NPAR], lu_min = G_MAXDOUBLE, lu_max = -G_MAXDOUBLE, total = 0.0;
  guint n_spurs = 0;

  p[0] = (90.0 - lf->inclination_deg) * DEG;
  p[1] = log (lf->kms_per_arcsec);
  p[2] = log (lf->c_per_arcsec);
  p[3] = log (lf->z_max_arcsec);
  p[4] = lf->z_min_arcsec / lf->z_max_arcsec;
  image_residuals (im, p, NULL);   /* renders the model and its scale */
  for (gsize c = 0; c < ncol; c++)
    {
      umin[c] = G_MAXDOUBLE;
      umax[c] = -G_MAXDOUBLE;
    }
  for (gsize j = 0; j < data->n; j++)
    {
      Point *pt = &data->pts[j];
      double model;
      if (!pt->use)
        continue;
      model = im->amp * im->model[(gsize) pt->chan * ncol + (gsize) pt->col];
      flux[pt->col] += pt->w;
      total += pt->w;
      if (model < SPUR_MODEL * pt->w)
        off[pt->col] += pt->w;
      umin[pt->col] = MIN (umin[pt->col], pt->u);
      umax[pt->col] = MAX (umax[pt->col], pt->u);
      lu_min = MIN (lu_min, pt->u);
      lu_max = MAX (lu_max, pt->u);
    }
  for (gsize c = 0; c < ncol; c++)
    bad[c] = flux[c] > 0.0 && off[c] > SPUR_FLUX * flux[c]
             && umax[c] - umin[c] >= SPUR_SPAN * (lu_max - lu_min);
  for (gsize c = 0; c < ncol; c++)
    {
      EffluxShellSpur spur;
      gsize e = c;
      double f = 0.0, vlo = G_MAXDOUBLE, vhi = -G_MAXDOUBLE;

      if (!bad[c])
        continue;
      while (e + 1 < ncol && bad[e + 1])
        e++;
      for (gsize q = c; q <= e; q++)
        {
          f += flux[q];
          vlo = MIN (vlo, umin[q]);
          vhi = MAX (vhi, umax[q]);
        }
      spur.x_min_arcsec = (double) c * pv->offset_step_arcsec - source_offset;
      spur.x_max_arcsec = (double) e * pv->offset_step_arcsec - source_offset;
      /* back to LSR velocities: u is measured in the lobe's sense */
      spur.v_min_kms = vsys + MIN (sv * vlo, sv * vhi);
      spur.v_max_kms = vsys + MAX (sv * vlo, sv * vhi);
      spur.flux_fraction = f / total;
      g_array_append_val (lf->spurs, spur);
      n_spurs++;
      for (gsize j = 0; j < data->n; j++)
        if ((gsize) data->pts[j].col >= c && (gsize) data->pts[j].col <= e)
          data->pts[j].use = FALSE;
      c = e;
    }
  return n_spurs;
}

void
efflux_shellfit_free (EffluxShellFit *fit)
{
  if (fit == NULL)
    return;
  for (int l = 0; l < 2; l++)
    {
      g_free (fit->lobes[l].message);
      if (fit->lobes[l].spurs != NULL)
        g_array_unref (fit->lobes[l].spurs);
    }
  g_free (fit);
}

static void
combine (double *mean,
         double *err,
         const double *v,
         const double *e,
         int           n)
{
  double sw = 0.0, swv = 0.0;

  for (int i = 0; i < n; i++)
    {
      double w = e[i] > 0.0 ? 1.0 / (e[i] * e[i]) : 1e300;
      sw += w;
      swv += w * v[i];
    }
  *mean = n > 0 ? swv / sw : NAN;
  *err = n > 0 ? sqrt (1.0 / sw) : NAN;
}

EffluxShellFit *
efflux_shellfit_pv (const EffluxPv               *pv,
                    double                        source_offset_arcsec,
                    double                        vsys_kms,
                    double                        distance_pc,
                    double                        res_x_arcsec,
                    const EffluxShellfitOptions  *options,
                    GError                      **error)
{
  g_autoptr (EffluxShellFit) fit = g_new0 (EffluxShellFit, 1);
  double peak = 0.0, thr, vmin;
  double n_corr;
  int order[2] = { +1, -1 };

  fit->source_offset_arcsec = source_offset_arcsec;
  fit->vsys_kms = vsys_kms;
  fit->distance_pc = distance_pc;
  fit->res_x_arcsec = res_x_arcsec > 0.0 ? res_x_arcsec : pv->offset_step_arcsec;
  fit->res_v_kms = fabs (pv->dv_kms);
  vmin = options != NULL && isfinite (options->vmin_kms) ? options->vmin_kms : 0.0;
  fit->vmin_kms = vmin;
  if (!(distance_pc > 0.0))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "[Source] distance-pc: a distance is needed for the age");
      return NULL;
    }

  for (gsize k = 0; k < pv->nchan; k++)
    if (fabs (pv->velocity[k] - vsys_kms) >= vmin)
      for (gsize i = 0; i < pv->n_offsets; i++)
        {
          float t = pv->data[k * pv->n_offsets + i];
          if (isfinite (t))
            peak = MAX (peak, t);
        }
  if (!(peak > 0.0))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "the cut has no emission beyond %g km/s from vsys", vmin);
      return NULL;
    }
  if (options != NULL && isfinite (options->threshold_k))
    thr = options->threshold_k;
  else
    {
      thr = 0.05 * peak;
      if (options != NULL && isfinite (options->noise_k))
        thr = MAX (thr, 5.0 * options->noise_k);
    }
  fit->threshold_k = thr;
  n_corr = MAX (fit->res_x_arcsec / pv->offset_step_arcsec, 1.0);

  for (int s = 0; s < 2; s++)
    {
      int side = order[s];
      EffluxShellLobeFit *lf = &fit->lobes[fit->n_lobes];
      g_autoptr (GArray) pts = g_array_new (FALSE, FALSE, sizeof (Point));
      double su = 0.0, sv;
      Data data;

      for (gsize k = 0; k < pv->nchan; k++)
        {
          double u = pv->velocity[k] - vsys_kms;
          if (fabs (u) < vmin)
            continue;
          for (gsize i = 0; i < pv->n_offsets; i++)
            {
              float t = pv->data[k * pv->n_offsets + i];
              double x = (double) i * pv->offset_step_arcsec - source_offset_arcsec;
              Point pt;
              if (!(isfinite (t) && t > thr) || !(side * x > 0.0))
                continue;
              pt.x = side * x;
              pt.u = u;
              pt.w = t;
              pt.col = (int) i;
              pt.chan = (int) k;
              pt.rho = NAN;
              pt.use = TRUE;
              g_array_append_val (pts, pt);
              su += t * u;
            }
        }
      if (pts->len == 0)
        continue;
      sv = su >= 0.0 ? 1.0 : -1.0;
      for (guint j = 0; j < pts->len; j++)
        g_array_index (pts, Point, j).u *= sv;
      fit->n_lobes++;
      lf->side = side;
      lf->kind = sv > 0 ? EFFLUX_LOBE_RED : EFFLUX_LOBE_BLUE;
      lf->spurs = g_array_new (FALSE, FALSE, sizeof (EffluxShellSpur));
      lf->inclination_deg = lf->inclination_err_deg = lf->age_yr = lf->age_err_yr = NAN;
      lf->c_per_arcsec = lf->c_err_per_arcsec = lf->kms_per_arcsec = lf->rms_distance = NAN;
      data.pts = (Point *) pts->data;
      data.n = pts->len;
      data.rx = fit->res_x_arcsec;
      data.ru = fit->res_v_kms;
      {
        g_autofree gboolean *col_ok = g_new (gboolean, pv->n_offsets);
        g_autofree float *model = g_new (float, pv->n_offsets * pv->nchan);
        double sig_b = fit->res_x_arcsec / 2.3548200450309493, st = pv->offset_step_arcsec;
        double hw = pv->half_width;
        /* along the cut: the beam and the cut's bilinear interpolation (a triangle of one
         * pixel's half-width: variance pixel^2 / 6); across: the same and the 2 hw + 1 samples
         * averaged at whole pixels (variance pixel^2 hw (hw + 1) / 3) */
        Image im = { pv, side, sv, vsys_kms, source_offset_arcsec, vmin,
                     sqrt (sig_b * sig_b + st * st / 6.0) / st,
                     sqrt (sig_b * sig_b + st * st * (hw * (hw + 1.0) / 3.0 + 1.0 / 6.0)),
                     fit->res_x_arcsec / st,
                     col_ok, model, 0.0, 0 };

        for (gsize c = 0; c < pv->n_offsets; c++)
          col_ok[c] = TRUE;
        lf->ok = fit_lobe (pv, &data, &im, lf, distance_pc, n_corr);
        if (lf->ok && find_spurs (pv, &data, &im, lf, source_offset_arcsec, vsys_kms, sv) > 0)
          {
            /* fit again without the spurs' columns */
            for (guint q = 0; q < lf->spurs->len; q++)
              {
                const EffluxShellSpur *sp = &g_array_index (lf->spurs, EffluxShellSpur, q);
                for (gsize c = 0; c < pv->n_offsets; c++)
                  {
                    double x = (double) c * pv->offset_step_arcsec - source_offset_arcsec;
                    if (x >= MIN (sp->x_min_arcsec, sp->x_max_arcsec) - 1e-9
                        && x <= MAX (sp->x_min_arcsec, sp->x_max_arcsec) + 1e-9)
                      col_ok[c] = FALSE;
                  }
              }
            lf->ok = fit_lobe (pv, &data, &im, lf, distance_pc, n_corr);
          }
      }
    }
  if (fit->n_lobes == 0)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "the cut has no emission above %.4g K beyond %g km/s from vsys on either side of the source",
                   thr, vmin);
      return NULL;
    }
  {
    double vi[2], ei[2], va[2], ea[2], vc[2], ec[2];
    int n = 0;
    for (guint l = 0; l < fit->n_lobes; l++)
      if (fit->lobes[l].ok)
        {
          vi[n] = fit->lobes[l].inclination_deg;
          ei[n] = fit->lobes[l].inclination_err_deg;
          va[n] = fit->lobes[l].age_yr;
          ea[n] = fit->lobes[l].age_err_yr;
          vc[n] = fit->lobes[l].c_per_arcsec;
          ec[n] = fit->lobes[l].c_err_per_arcsec;
          n++;
        }
    combine (&fit->inclination_deg, &fit->inclination_err_deg, vi, ei, n);
    combine (&fit->age_yr, &fit->age_err_yr, va, ea, n);
    combine (&fit->c_per_arcsec, &fit->c_err_per_arcsec, vc, ec, n);
  }
  return g_steal_pointer (&fit);
}

gsize
efflux_shellfit_curve (const EffluxShellFit *fit,
                       guint                 lobe,
                       gsize                 n,
                       double               *offset_arcsec,
                       double               *velocity_kms)
{
  const EffluxShellLobeFit *lf;
  double sv;

  if (lobe >= fit->n_lobes || !fit->lobes[lobe].ok || n < 2)
    return 0;
  lf = &fit->lobes[lobe];
  sv = lf->kind == EFFLUX_LOBE_RED ? 1.0 : -1.0;
  for (gsize i = 0; i < n; i++)
    {
      double rho = lf->rho_min + (lf->rho_max - lf->rho_min) * (double) i / (double) (n - 1);
      double x, u;
      efflux_shell_model (rho, lf->inclination_deg, lf->c_per_arcsec, lf->kms_per_arcsec, &x, &u);
      offset_arcsec[i] = fit->source_offset_arcsec + lf->side * x;
      velocity_kms[i] = fit->vsys_kms + sv * u;
    }
  return n;
}

/* The defaults a dossier gives: the cube's noise, the lobes' smallest |v - vsys|. */
static void
dossier_defaults (const EffluxDossier       *dossier,
                  const EffluxDossierCube   *dc,
                  const EffluxCube          *cube,
                  EffluxShellfitOptions     *opt)
{
  if (!isfinite (opt->noise_k))
    opt->noise_k = dc != NULL && isfinite (dc->rms_k) ? dc->rms_k : efflux_kinematics_pv_sigma (cube);
  if (!isfinite (opt->vmin_kms))
    {
      /* the smallest |v - vsys| the lobes' ranges admit (0 when a range holds vsys) */
      double m = G_MAXDOUBLE;
      for (guint l = 0; l < dossier->lobes->len; l++)
        {
          const EffluxDossierLobe *lobe = g_ptr_array_index (dossier->lobes, l);
          double a = lobe->v1_kms - dossier->vsys_kms, b = lobe->v2_kms - dossier->vsys_kms;
          m = MIN (m, a <= 0.0 && b >= 0.0 ? 0.0 : MIN (fabs (a), fabs (b)));
        }
      opt->vmin_kms = m < G_MAXDOUBLE ? m : 0.0;
    }
}

EffluxShellFit *
efflux_shellfit_dossier_cube (const EffluxDossier          *dossier,
                              const char                   *cut_name,
                              const EffluxCube             *cube,
                              const EffluxShellfitOptions  *options,
                              GError                      **error)
{
  const EffluxDossierCut *cut = NULL;
  EffluxShellfitOptions opt = { NAN, NAN, NAN };
  g_autoptr (EffluxPv) pv = NULL;
  g_autofree double *ra_dec = NULL;
  double sx, sy, soff, sdist;
  EffluxShellFit *fit;

  if (options != NULL)
    opt = *options;
  cut = efflux_kinematics_find_cut (dossier, cut_name, error);
  if (cut == NULL)
    return NULL;
  ra_dec = efflux_dossier_cut_path (cut);
  pv = efflux_pv_cut (cube, ra_dec, cut->n_vertices, cut->width_arcsec, error);
  if (pv == NULL)
    {
      g_prefix_error (error, "%s: [Cut %s]: ", dossier->path, cut_name);
      return NULL;
    }
  if (!efflux_cube_icrs_to_pixel (cube, dossier->ra_deg, dossier->dec_deg, &sx, &sy)
      || !efflux_kinematics_offset_on_cut (pv, sx, sy, &soff, &sdist))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: [Source] ra-deg: the source cannot be placed on [Cut %s]", dossier->path, cut_name);
      return NULL;
    }
  dossier_defaults (dossier, efflux_dossier_find_cube (dossier, cut->cube_id), cube, &opt);
  fit = efflux_shellfit_pv (pv, soff, dossier->vsys_kms, dossier->distance_pc,
                            cube->has_beam ? cube->bmaj_arcsec : NAN, &opt, error);
  if (fit == NULL)
    g_prefix_error (error, "%s: [Cut %s]: ", dossier->path, cut_name);
  return fit;
}

EffluxShellFit *
efflux_shellfit_dossier (const EffluxDossier          *dossier,
                         const char                   *cut_name,
                         const EffluxShellfitOptions  *options,
                         GError                      **error)
{
  EffluxDossierCutPv cp;
  EffluxShellfitOptions opt = { NAN, NAN, NAN };
  EffluxShellFit *fit;

  if (options != NULL)
    opt = *options;
  if (!efflux_dossier_cut_pv (dossier, cut_name, NULL, &cp, error))
    return NULL;
  dossier_defaults (dossier, cp.dc, cp.cube, &opt);
  fit = efflux_shellfit_pv (cp.pv, cp.source_offset_arcsec, dossier->vsys_kms, dossier->distance_pc,
                            cp.cube->has_beam ? cp.cube->bmaj_arcsec : NAN, &opt, error);
  if (fit == NULL)
    g_prefix_error (error, "%s: [Cut %s]: ", dossier->path, cut_name);
  efflux_dossier_cut_pv_clear (&cp);
  return fit;
}
