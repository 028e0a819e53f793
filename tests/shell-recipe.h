/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* The synthetic wind-driven shell of the shell-fit tests (test-shellfit, test-shellfit-coverage):
 * a recipe for efflux_synth_run with the inclination (deg) left as %g. */
#define RECIPE_FMT \
  "[Recipe]\nname=shell\nseed=7\n\n" \
  "[Source]\nname=Shell test\nra-deg=83.8\ndec-deg=-5.4\ndistance-pc=300\nvsys-kms=5\n" \
  "inclination-deg=%g\nposition-angle-deg=30\n\n" \
  "[Grid]\nnx=81\nny=81\npixel-arcsec=0.5\nnchan=110\nvstart-kms=-22.25\ndv-kms=0.5\nbeam-arcsec=1.5\n\n" \
  "[Physics]\ntex-k=30\nco-abundance=1e-4\n\n" \
  "[Lobe blue]\nkind=blue\nshape=shell\nmass-msun=2e-5\nlength-au=3000\nvmin-kms=1\nvmax-kms=20\n" \
  "shell-c-per-arcsec=1.2\n\n" \
  "[Lobe red]\nkind=red\nshape=shell\nmass-msun=2e-5\nlength-au=3000\nvmin-kms=1\nvmax-kms=20\n" \
  "shell-c-per-arcsec=1.2\n\n" \
  "[Cube co]\nline=12CO 2-1\n"
