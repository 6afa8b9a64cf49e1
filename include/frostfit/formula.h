/* frostfit/formula.h - molar masses from chemical formulas (run-sheet input to thermo). */
#ifndef FF_FORMULA_H
#define FF_FORMULA_H

#include <stddef.h>
#include "frostfit/diag.h"

/* Molar mass of water from the formula table's H and O is close to, but
 * not exactly, the IAPWS value FF_M_WATER_G_MOL of thermo.h. */

/* One element: symbol ("Na"), atomic number, standard atomic weight. */
struct ff_element {
  char sym[4];
  int z;
  double w_g_mol;              /* conventional / abridged standard weight */
};

/* Table the caller holds: FF_ATOMIC_TABLE_INIT, _load, then _release. */
struct ff_atomic_table {
  size_t n, cap;
  struct ff_element *v;
};
#define FF_ATOMIC_TABLE_INIT { 0 }

/*
 * Appends the rows of an atomic-weight CSV (datasets/atomic_weights.csv:
 * header with at least the columns symbol, z, weight_g_mol; other columns
 * such as source are ignored) to t; a symbol already present is replaced.
 * FF_EINPUT with path:line:column on a bad cell or duplicate header,
 * FF_EIO when unreadable or out of memory. On failure t keeps the rows it
 * had before the call.
 */
int ff_atomic_table_load(struct ff_atomic_table *t, const char *path,
                         struct ff_diag *d);
void ff_atomic_table_release(struct ff_atomic_table *t);

/* By symbol, case-sensitive ("Co" is cobalt, "CO" is not a symbol). The
 * first len bytes of sym are compared. NULL when unknown. Borrowed. */
const struct ff_element *ff_atomic_find(const struct ff_atomic_table *t,
                                        const char *sym, size_t len);

/* What a formula weighs. Plain data; nothing to free. */
struct ff_formula {
  double m_g_mol;              /* whole formula unit, hydrate water included */
  double m_anhydrous_g_mol;    /* m_g_mol minus the hydrate water */
  double hydrate_waters;       /* mol H2O of crystallisation per formula unit
                                  (the "5" of CuSO4*5H2O; 0 when none) */
  double m_water_g_mol;        /* M(H2O) from this table, for the hydrate */
  int charge;                  /* net charge from a '^2-' suffix; 0 if none */
  size_t n_elements;           /* distinct elements seen */
};

/*
 * Parses text and weighs it with t (borrowed). Grammar:
 *   formula  := part { dot part } [ '^' [digits] ('+'|'-') ]
 *   part     := [number] group+
 *   group    := Element [number] | ('(' | '[' | '{') group+ matching-close [number]
 *   dot      := '*' | '.' | U+00B7 (UTF-8 C2 B7) | Latin-1 B7
 * Numbers may be decimal (CaSO4*0.5H2O). A part that is exactly water
 * after its coefficient (nH2O) counts as hydrate water; other adduct parts
 * count in the anhydrous mass. Spaces around dots are allowed.
 * Errors: FF_EINPUT with d->col = 1-based character position (UTF-8 code
 * points) and the bad text quoted in d->msg: unknown element, unbalanced or
 * mismatched brackets, empty formula or group, count 0 or above 1e6,
 * stray character. loc_path/loc_line (may be NULL/0) are copied into d so
 * a run-sheet caller gets sheet:line:col; col then is the character
 * position inside the cell.
 */
int ff_formula_parse(const struct ff_atomic_table *t, const char *text,
                     struct ff_formula *out, const char *loc_path,
                     unsigned long loc_line, struct ff_diag *d);

#endif /* FF_FORMULA_H */
