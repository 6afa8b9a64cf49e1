/* frostfit/sheet.h - the run sheet: which file, probe and masses make each
 * run; read before the series pipeline (docs/formats/run-sheet.md). */
#ifndef FF_SHEET_H
#define FF_SHEET_H

#include <stddef.h>
#include "frostfit/diag.h"
#include "frostfit/solvent.h"
#include "frostfit/formula.h"
#include "frostfit/detect.h"

enum ff_sheet_role {
  FF_SHEET_BLANK = 0,      /* pure solvent: the reference freezing point */
  FF_SHEET_SAMPLE,         /* known solute: i, phi, osmolality */
  FF_SHEET_UNKNOWN,        /* unknown solute: apparent molar mass */
  FF_SHEET_STANDARD,       /* known non-electrolyte: calibrates Kf */
  FF_SHEET_ROLE_NONE       /* the role cell could not be read (bad row) */
};

/* Columns the reader understands; FF_SHEET_NCOLS counts them. */
enum ff_sheet_col {
  FF_SC_RUN = 0, FF_SC_FILE, FF_SC_CHANNEL, FF_SC_CYCLE, FF_SC_ROLE,
  FF_SC_SOLVENT, FF_SC_SOLVENT_G, FF_SC_SOLUTE, FF_SC_SOLUTE_G,
  FF_SC_MOLALITY, FF_SC_MOLAR_MASS, FF_SC_FORMULA, FF_SC_PARTICLES,
  FF_SC_HYDRATE_WATERS, FF_SC_KF, FF_SC_BLANK, FF_SC_NOTE, FF_SC_Z_PLUS,
  FF_SC_Z_MINUS, FF_SC_BALANCE_RES_G, FF_SC_THERMO_RES_K, FF_SC_U_KF,
  FF_SC_METHOD, FF_SC_PROBE, FF_SHEET_NCOLS
};

#define FF_SHEET_CYCLE_LAST 0u   /* cycle "last" */

/*
 * One row. Numbers that were left blank are NaN (particles, z_plus and
 * z_minus are 0 when blank). Text fields are "" when blank.
 */
struct ff_sheet_row {
  unsigned long line;          /* physical line of the row in the sheet */
  char run[64];                /* unique id */
  char file[512];              /* as written */
  char path[1600];             /* resolved against the sheet's folder */
  char channel[128];           /* header name or 1-based number; "1" */
  unsigned cycle;              /* 1-based, or FF_SHEET_CYCLE_LAST */
  enum ff_sheet_role role;
  char solvent[64];
  double solvent_g;            /* g of solvent weighed (no hydrate water) */
  char solute[128];            /* name used to group runs */
  double solute_g;             /* g of solute as weighed (hydrate included) */
  double molality_mol_kg;      /* when given instead of masses */
  double molar_mass_g_mol;     /* of the anhydrous solute, as typed */
  char formula[128];           /* e.g. "NaCl", "CuSO4*5H2O" */
  unsigned particles;          /* per formula unit fully dissociated; 0 */
  double hydrate_waters;       /* waters of crystallisation per unit */
  double kf_k_kg_mol;          /* lab-calibrated Kf for this run */
  double u_kf_k_kg_mol;        /* its standard uncertainty */
  char blank[64];              /* run id of its blank, as written */
  long blank_row;              /* index of that row, -1 when none */
  int blank_auto;              /* 1: blank cell empty, the only blank of the
                                  same solvent was chosen */
  char note[256];
  int z_plus, z_minus;         /* ion charges (z_minus as a magnitude); 0 */
  double balance_res_g;        /* balance resolution; NaN = default */
  double thermo_res_k;         /* thermometer resolution; NaN = none added */
  enum ff_method method;       /* how to read the freezing point; auto */
  char probe[64];              /* id of the thermometer probe, e.g. "P1"
                                  (trimmed, at most 63 bytes); "" = not
                                  given or no 'probe' column */
  /* Filled by ff_sheet_check from molar_mass / formula / hydrate_waters: */
  double m_anhydrous_g_mol;    /* M of the solute without hydrate water; NaN */
  double waters;               /* hydrate waters per unit used (0 if none) */
  double m_weighed_g_mol;      /* M of what was weighed (hydrate included) */
  struct ff_diag diag;         /* FF_OK, or this row's first problem */
};

/* A sheet held by the caller: _INIT, _read, then _release. */
struct ff_sheet {
  char path[1024];             /* as given */
  char dir[1024];              /* folder that relative paths start from */
  char delimiter;              /* ',' or ';' as found */
  unsigned col[FF_SHEET_NCOLS];/* 1-based column of each field, 0 = absent */
  size_t width;                /* cells in the header row */
  size_t n, cap;
  struct ff_sheet_row *row;    /* n rows in sheet order */
  size_t n_bad;                /* rows whose diag is not FF_OK */
  char ignored[256];           /* header names not understood, ", " list */
};
#define FF_SHEET_INIT { .delimiter = ',' }

/*
 * Reads a run sheet: a CSV (comma or semicolon; with ';' a decimal comma is
 * accepted), '#' comment lines, header names case-insensitive, in any order.
 * Each row is checked on its own (required cells, numbers, masses in range,
 * role, cycle) and then against the others (duplicate run ids, a blank that
 * does not exist, is not a blank, or loops). A bad row keeps its problem in
 * row->diag and the rest are still read.
 *
 * Returns FF_OK when every row is good. FF_EINPUT when anything is wrong:
 * d holds the first problem as sheet:line:column with the column's name in
 * the message; when the header itself is unusable out->n is 0. FF_EIO when
 * the file cannot be read or memory runs out.
 */
int ff_sheet_read(const char *path, struct ff_sheet *out, struct ff_diag *d);

/*
 * What needs other tables: the solvent name against t (the message names the
 * known ones); the formula against atoms (the parser's message and the
 * character position in the cell), its weight against a molar_mass typed
 * beside it (0.5 %) and its hydrate water against hydrate_waters; that the
 * data file of every good row can be opened (the message names the path
 * tried). Fills m_anhydrous_g_mol, waters and m_weighed_g_mol. Marks the
 * rows it rejects; returns FF_OK or FF_EINPUT with the first new problem in
 * d. t or atoms may be NULL (that check skipped; a formula then needs
 * atoms, so its row is rejected).
 */
int ff_sheet_check(struct ff_sheet *s, const struct ff_solvent_table *t,
                   const struct ff_atomic_table *atoms, struct ff_diag *d);

void ff_sheet_release(struct ff_sheet *s);

/* Header name of a column, e.g. "solvent_g". */
const char *ff_sheet_col_name(enum ff_sheet_col c);

/* "blank", "sample", "unknown" or "standard". */
const char *ff_sheet_role_name(enum ff_sheet_role r);

/*
 * Records a problem of row r in column c in both r->diag and d (first one
 * wins in each): sheet:line:column, message "column 'NAME': ...". Returns
 * FF_EINPUT. For stages after the reader (formula parser, importer).
 */
int ff_sheet_row_fail(struct ff_sheet *s, struct ff_sheet_row *r,
                      enum ff_sheet_col c, struct ff_diag *d,
                      const char *fmt, ...)
  __attribute__((format(printf, 5, 6)));

#endif /* FF_SHEET_H */
