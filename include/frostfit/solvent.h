/* frostfit/solvent.h - the solvent table: constants, hazards, sources. */
#ifndef FF_SOLVENT_H
#define FF_SOLVENT_H

#include <stddef.h>
#include "frostfit/diag.h"

#define FF_GAS_R 8.314462618   /* J/(mol K), CODATA 2018 exact */
#define FF_ZERO_C 273.15       /* K at 0 degrees C */

/* One solvent. Plain data; units in the names. A constant the table leaves
 * empty is NaN (allowed for dh_fus, m, cp: Kf calc and the simulator then
 * refuse it); name, tf_c and kf_k_kg_mol are always present. */
struct ff_solvent {
  char name[64];               /* key used in run sheets, lower case */
  char aliases[128];           /* other accepted names, '|' separated */
  double tf_c;                 /* freezing point of the pure solvent */
  double kf_k_kg_mol;          /* tabulated cryoscopic constant */
  double dh_fus_j_mol;         /* enthalpy of fusion at tf */
  double m_g_mol;              /* molar mass */
  double cp_liq_j_g_k;         /* liquid specific heat capacity */
  double cp_sol_j_g_k;         /* solid specific heat capacity */
  char hazard[256];            /* short caution text */
  char source[512];            /* where the constants come from */
};

/* A table the caller holds: _INIT, fill with _load, then _release. */
struct ff_solvent_table {
  size_t n, cap;
  struct ff_solvent *v;
};
#define FF_SOLVENT_TABLE_INIT { 0 }

/*
 * Appends the rows of a solvent CSV (datasets/solvents.csv format; see
 * docs/formats/solvents.md) to t; a row whose name is already present (from
 * an earlier file) replaces it, so a user file loaded second overrides the
 * bundled one. FF_EINPUT with path:line:column on a bad cell, a missing
 * column or a name repeated within one file; FF_EIO when unreadable or out
 * of memory. On failure t keeps the rows it had before the call.
 */
int ff_solvent_table_load(struct ff_solvent_table *t, const char *path,
                          struct ff_diag *d);
void ff_solvent_table_release(struct ff_solvent_table *t);

/* By name or alias, case-insensitive; NULL when unknown. Borrowed. */
const struct ff_solvent *ff_solvent_find(const struct ff_solvent_table *t,
                                         const char *name);

/* Kf = R Tf^2 M / dH_fus in K kg/mol, from the row's own constants (Tf in
 * K, M in kg/mol); NaN when dH_fus or M is missing. */
double ff_solvent_kf_calc(const struct ff_solvent *s);

/* Frozen mass fraction per kelvin of supercooling, cp_liq / L_fus [1/K]
 * with L_fus = dH_fus / M in J/g; NaN when a constant is missing. */
double ff_solvent_frozen_per_k(const struct ff_solvent *s);

/* A short general caution for cold baths and cryoscopy solvents (static
 * text, never NULL). */
const char *ff_solvent_caution(void);

#endif /* FF_SOLVENT_H */
