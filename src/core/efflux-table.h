/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <glib.h>

#include "efflux-dossier.h"
#include "efflux-measure.h"

G_BEGIN_DECLS

/* The measurement table of a sample (several sources) and its writers.
 *
 * A table holds the columns of efflux_measure_columns() (CONTRACT.md section 3 first, in order),
 * one row per lobe and a total row per source, and per source its metadata: the source name, the
 * dossier's file name, its place in the sample (sample_index, 1-based, of sample_size) and its
 * assumptions (distance, v_sys, inclination, T_ex, abundances, opacity, Monte Carlo ...), plus
 * the Efflux version that wrote it.
 *
 * Cells are kept as text in the shortest form that reads back to the same double (at most 17
 * significant digits), "" for an empty cell, and as numbers (NaN for text and empty cells).
 *
 * Formats:
 *   csv       header row, then the rows; the metadata follow as trailing columns on every row
 *             (efflux_version, sample_index, sample_size, dossier, notes joined by " | ", then
 *             assumed_KEY for each assumption), so that every CSV reader (astropy's csv format, Python's csv module,
 *             spreadsheets) reads the file as it is: leading '#' lines break astropy's csv reader
 *             and most others, and no sidecar file is written. Parts written in csv can be merged.
 *   ecsv      ECSV 1.0 (astropy.table.Table.read): units, descriptions, the metadata in `meta`.
 *   votable   IVOA VOTable 1.4, TABLEDATA: units (CDS syntax), UCD1+ words, descriptions; the
 *             version as INFO, each source's assumptions as a GROUP of PARAMs, notes as INFO.
 *   latex     AASTeX deluxetable of the CONTRACT.md columns; values rounded to their uncertainty
 *             (efflux_table_format_rounded); version and assumptions in '%' comments and in
 *             \tablecomments.
 *   markdown  a pipe table of the same columns, rounded the same way; version and assumptions as
 *             footnotes.
 *   json      {"columns", "units", "descriptions", "rows", "metadata"}; full precision. */

typedef enum
{
  EFFLUX_TABLE_CSV,
  EFFLUX_TABLE_ECSV,
  EFFLUX_TABLE_VOTABLE,
  EFFLUX_TABLE_LATEX,
  EFFLUX_TABLE_MARKDOWN,
  EFFLUX_TABLE_JSON,
} EffluxTableFormat;

typedef enum
{
  EFFLUX_TABLE_TEXT,
  EFFLUX_TABLE_INT,
  EFFLUX_TABLE_REAL,
} EffluxTableType;

typedef struct
{
  char            *name;
  EffluxTableType  type;
  char            *unit;          /* astropy generic unit string, "" for none */
  char            *unit_cds;      /* the same in the CDS syntax VOTable uses, "" for none */
  char            *ucd;           /* UCD1+ */
  char            *description;
} EffluxTableColumn;

typedef struct
{
  char            *key;           /* e.g. distance_pc */
  char            *value;         /* text; numbers in the shortest round-trip form, "" when absent */
  gboolean         numeric;
  const char      *unit;
  const char      *unit_cds;
  const char      *ucd;
} EffluxTableParam;

typedef struct
{
  char            *source;
  char            *dossier;       /* the dossier's file name (no directory) */
  guint            sample_index;  /* 1-based place in the whole sample */
  guint            sample_size;
  GPtrArray       *params;        /* EffluxTableParam *: the assumptions, always the same keys */
  GPtrArray       *notes;         /* char * */
} EffluxTableSource;

typedef struct
{
  guint            source;        /* index into EffluxTable.sources */
  char           **text;          /* n columns */
  double          *value;         /* n columns; NaN for text and empty cells */
} EffluxTableRow;

typedef struct
{
  char            *version;       /* the Efflux version that measured */
  GPtrArray       *columns;       /* EffluxTableColumn * */
  GPtrArray       *sources;       /* EffluxTableSource *, in sample order */
  GPtrArray       *rows;          /* EffluxTableRow *, grouped by source, in sample order */
} EffluxTable;

/* An empty table with the measure columns and this program's version. */
EffluxTable *efflux_table_new           (void);
void         efflux_table_free          (EffluxTable *table);

/* Append a measured source (its lobe rows and total row, metadata from the dossier). */
void         efflux_table_add_source    (EffluxTable               *table,
                                         const EffluxDossier       *dossier,
                                         const EffluxMeasureResult *result,
                                         guint                      sample_index,
                                         guint                      sample_size);

/* "csv", "ecsv", "votable", "latex", "markdown", "json" (also "md", "tex", "xml", "vot"). */
gboolean     efflux_table_format_from_name (const char        *name,
                                            EffluxTableFormat *format);
/* The format a file name suggests by its extension; FALSE when none does. */
gboolean     efflux_table_format_from_path (const char        *path,
                                            EffluxTableFormat *format);

char        *efflux_table_to_string     (const EffluxTable *table,
                                         EffluxTableFormat  format);

/* Read a table written in csv by efflux_table_to_string (parts of a sharded measurement).
 * display_name names the file in errors. */
EffluxTable *efflux_table_new_from_csv  (const char  *data,
                                         gsize        length,
                                         const char  *display_name,
                                         GError     **error);

/* Join parts of one sample: same version, same columns, same sample size; each source in one
 * part only, and every source of the sample present. The rows come out in sample order.
 * names[i] names part i in errors. */
EffluxTable *efflux_table_merge         (EffluxTable * const *parts,
                                         const char * const  *names,
                                         guint                n_parts,
                                         GError             **error);

/* A value rounded to its uncertainty, as LaTeX (math mode, with $) or markdown (UTF-8) text.
 * Rule: the uncertainty keeps one significant digit, two when its leading digit is 1; the value
 * is rounded to the same decimal place (half away from zero). Numbers of 1e5 and above, or below
 * 1e-3, share a power of ten: (1.23 +- 0.05) x 10^44. Without a finite positive uncertainty the
 * value keeps three significant digits and no +- part. NaN gives "" (the caller writes a
 * no-data mark). */
char        *efflux_table_format_rounded (double            value,
                                          double            uncertainty,
                                          EffluxTableFormat format);

/* The shortest "%.Ng" (N <= 17) text that reads back to exactly value; "" for NaN. */
char        *efflux_table_number_text   (double value);

G_DEFINE_AUTOPTR_CLEANUP_FUNC (EffluxTable, efflux_table_free)

G_END_DECLS
