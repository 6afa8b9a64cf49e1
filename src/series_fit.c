/* series_fit.c - the series pipeline after the runs: particles per formula
 * unit, runs grouped per solute and fitted (regress.h), unknowns
 * extrapolated to zero concentration. */
#include <ctype.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include "frostfit/parallel.h"
#include "series_impl.h"

/* ---- particles from a formula: simple salts only ---- */

/* Cations recognised at the start of a formula; their charge comes from
 * neutrality with the anion (so FeCl2 and FeCl3 both work). */
static const char *const cations[] = {
  "NH4", "H", "Li", "Na", "K", "Rb", "Cs", "Ag", "Tl", "Cu", "Mg", "Ca",
  "Sr", "Ba", "Zn", "Mn", "Fe", "Co", "Ni", "Cd", "Pb", "Hg", "Sn", "Al",
  "Cr", "La", "Ce", "Y", "Sc", "Ga", "In", "Be"
};

/* Anions with their charge magnitude (common practice, no source). */
static const struct { const char *a; int z; } anions[] = {
  { "F", 1 }, { "Cl", 1 }, { "Br", 1 }, { "I", 1 }, { "NO3", 1 },
  { "NO2", 1 }, { "OH", 1 }, { "ClO4", 1 }, { "ClO3", 1 }, { "BrO3", 1 },
  { "IO3", 1 }, { "CH3COO", 1 }, { "HCOO", 1 }, { "HCO3", 1 },
  { "H2PO4", 1 }, { "HSO4", 1 }, { "SCN", 1 }, { "CN", 1 }, { "MnO4", 1 },
  { "SO4", 2 }, { "CO3", 2 }, { "HPO4", 2 }, { "CrO4", 2 }, { "Cr2O7", 2 },
  { "S2O3", 2 }, { "C2O4", 2 }, { "SO3", 2 }, { "PO4", 3 },
};

/* Reads an optional count; 1 when none. -1 on nonsense. */
static int count(const char **p)
{
  int n = 0;

  if (!isdigit((unsigned char)**p))
    return 1;
  while (isdigit((unsigned char)**p)) {
    n = 10 * n + (**p - '0');
    (*p)++;
    if (n > 20)
      return -1;
  }
  return n > 0 ? n : -1;
}

/* Anion at p filling the rest exactly (with an optional count). */
static int match_anion(const char *p, int *z, int *n)
{
  int paren = *p == '(';
  size_t best = 0;
  int best_z = 0;

  if (paren)
    p++;
  for (size_t k = 0; k < sizeof anions / sizeof anions[0]; k++) {
    size_t len = strlen(anions[k].a);
    const char *q = p + len;
    if (strncmp(p, anions[k].a, len) != 0 || len <= best)
      continue;
    if (paren && *q != ')')
      continue;
    if (paren)
      q++;
    const char *r = q;
    if (count(&r) < 0 || *r != '\0')
      continue;
    best = len;
    best_z = anions[k].z;
  }
  if (best == 0)
    return 0;
  p += best + (paren ? 1 : 0);
  *n = count(&p);
  *z = best_z;
  return *n > 0;
}

/* "Na2SO4" -> nu+ 2, z+ 1, nu- 1, z- 2. Hydrate part ignored. */
static int salt_of_formula(const char *formula, struct ff_particles *p)
{
  char f[128];
  const char *q;
  size_t len = 0;

  for (const char *s = formula; *s && len + 1 < sizeof f; s++) {
    if (*s == '*' || *s == '.' || (unsigned char)*s == 0xB7
        || (unsigned char)*s == 0xC2)
      break;
    if (*s != ' ')
      f[len++] = *s;
  }
  f[len] = '\0';
  for (size_t c = 0; c < sizeof cations / sizeof cations[0]; c++) {
    const char *cat = cations[c];
    size_t cl = strlen(cat);
    int np, nm, zm;

    q = f;
    if (*q == '(' && strncmp(q + 1, cat, cl) == 0 && q[1 + cl] == ')') {
      q += cl + 2;
    } else if (strncmp(q, cat, cl) == 0
               && !islower((unsigned char)q[cl])) {
      q += cl;
    } else {
      continue;
    }
    np = count(&q);
    if (np < 0)
      continue;
    if (!match_anion(q, &zm, &nm))
      continue;
    if ((nm * zm) % np != 0)
      continue;
    int zp = nm * zm / np;
    if (zp < 1 || zp > 4)
      continue;
    p->nu_plus = (unsigned)np;
    p->nu_minus = (unsigned)nm;
    p->z_plus = zp;
    p->z_minus = zm;
    p->nu = (unsigned)(np + nm);
    return 1;
  }
  return 0;
}

static int gcd(int a, int b)
{
  while (b != 0) {
    int t = a % b;
    a = b;
    b = t;
  }
  return a;
}

/* The simplest valence type with nu particles. */
static int from_particles(unsigned nu, struct ff_particles *p)
{
  static const int t[6][4] = { /* nu+, z+, nu-, z- */
    { 0, 0, 0, 0 }, { 0, 0, 0, 0 }, { 1, 1, 1, 1 }, { 1, 2, 2, 1 },
    { 1, 3, 3, 1 }, { 2, 3, 3, 2 } };

  memset(p, 0, sizeof *p);
  if (nu == 1) {
    p->nu = 1;
    return 1;
  }
  if (nu < 2 || nu > 5)
    return 0;
  p->nu_plus = (unsigned)t[nu][0];
  p->z_plus = t[nu][1];
  p->nu_minus = (unsigned)t[nu][2];
  p->z_minus = t[nu][3];
  p->nu = nu;
  return 1;
}

int ff_series_particles(const struct ff_sheet_row *r, struct ff_particles *p,
                        char *how, size_t n)
{
  struct ff_particles salt;

  memset(p, 0, sizeof *p);
  if (r->z_plus > 0 && r->z_minus > 0) {
    int g = gcd(r->z_plus, r->z_minus);
    unsigned np = (unsigned)(r->z_minus / g), nm = (unsigned)(r->z_plus / g);
    if (r->particles > 0) {
      unsigned s = (unsigned)(r->z_plus + r->z_minus);
      if ((r->particles * (unsigned)r->z_minus) % s != 0) {
        snprintf(how, n, "z_plus %d and z_minus %d cannot make %u particles",
                 r->z_plus, r->z_minus, r->particles);
        return 0;
      }
      np = r->particles * (unsigned)r->z_minus / s;
      nm = r->particles - np;
    }
    p->nu_plus = np;
    p->nu_minus = nm;
    p->z_plus = r->z_plus;
    p->z_minus = r->z_minus;
    p->nu = np + nm;
    snprintf(how, n, "charges from the sheet: %u x (%d+), %u x (%d-)", np,
             r->z_plus, nm, r->z_minus);
    return 1;
  }
  if (r->formula[0] != '\0' && salt_of_formula(r->formula, &salt)) {
    if (r->particles == 0 || r->particles == salt.nu) {
      *p = salt;
      snprintf(how, n, "salt read from formula %s: %u x (%d+), %u x (%d-)",
               r->formula, salt.nu_plus, salt.z_plus, salt.nu_minus,
               salt.z_minus);
      return 1;
    }
  }
  if (r->particles > 0) {
    if (!from_particles(r->particles, p)) {
      snprintf(how, n, "particles %u: give z_plus and z_minus for the "
               "charges", r->particles);
      p->nu = r->particles;
      return 0;
    }
    snprintf(how, n, r->particles == 1 ? "particles 1: non-electrolyte"
             : "particles %u: simplest valence type assumed (%u x (%d+), "
               "%u x (%d-))", r->particles, p->nu_plus, p->z_plus,
             p->nu_minus, p->z_minus);
    return 1;
  }
  if (r->formula[0] != '\0') {
    p->nu = 1;
    snprintf(how, n, "no ions recognised in formula %s: non-electrolyte "
             "assumed (set particles to override)", r->formula);
    return 1;
  }
  snprintf(how, n, "unknown: give particles, a formula or z_plus/z_minus");
  return 0;
}

/* ---- grouping ---- */

/* Index of the group for (solute, solvent), appending a new one. */
static long group_of(char (*keys)[2][128], size_t *n, const char *solute,
                     const char *solvent)
{
  for (size_t k = 0; k < *n; k++)
    if (strcasecmp(keys[k][0], solute) == 0
        && strcasecmp(keys[k][1], solvent) == 0)
      return (long)k;
  snprintf(keys[*n][0], 128, "%s", solute);
  snprintf(keys[*n][1], 128, "%s", solvent);
  return (long)(*n)++;
}

static int append(size_t **v, size_t *n, size_t x)
{
  size_t *w = realloc(*v, (*n + 1) * sizeof *w);

  if (w == NULL)
    return -1;
  w[(*n)++] = x;
  *v = w;
  return 0;
}

static void fit_solute(struct ff_series *s, struct ff_series_solute *g,
                       const struct ff_series_opts *o)
{
  struct ff_regress_opts ro = FF_REGRESS_OPTS_DEFAULT;
  struct ff_regress_input in = { 0 };
  double *m = malloc(g->n * sizeof *m), *i = malloc(g->n * sizeof *i);
  double *u = malloc(g->n * sizeof *u), *um = malloc(g->n * sizeof *um);
  double tf = 0;
  int u_ok = 1;

  g->status = FF_EIO;
  if (m == NULL || i == NULL || u == NULL || um == NULL) {
    ff_diag_set(&g->diag, FF_EIO, NULL, "out of memory");
    goto done;
  }
  for (size_t k = 0; k < g->n; k++) {
    const struct ff_series_run *r = &s->runs[g->runs[k]];
    m[k] = r->molality_mol_kg;
    i[k] = r->th.vant_hoff_i;
    u[k] = r->th.u_vant_hoff_i;
    um[k] = r->u_molality_mol_kg;
    u_ok &= isfinite(u[k]) && u[k] > 0;
    tf += r->tf_c;
  }
  g->mean_tf_c = tf / (double)g->n;
  g->kf_k_kg_mol = s->runs[g->runs[0]].kf_k_kg_mol;
  g->a_phi = strcasecmp(g->solvent, "water") == 0
             ? ff_thermo_aphi_water(g->mean_tf_c) : 0.0;
  if (!isfinite(g->a_phi))
    g->a_phi = 0.0;
  in.n = g->n;
  in.m_mol_kg = m;
  in.i_obs = i;
  in.u_i = u_ok ? u : NULL;
  in.u_m_mol_kg = um;
  in.a_phi = g->a_phi;
  ro.confidence = o->confidence;
  if (g->particles_known) {
    in.p = g->particles;
    ro.models = FF_REGRESS_BIT(FF_REGRESS_SQRT_LINEAR)
              | FF_REGRESS_BIT(FF_REGRESS_DEBYE_HUCKEL)
              | FF_REGRESS_BIT(FF_REGRESS_DH_FIXED_NU);
    if (g->particles.nu >= 2 && g->particles.z_plus == g->particles.z_minus)
      ro.models |= FF_REGRESS_BIT(FF_REGRESS_ION_PAIRING);
    if (g->particles.nu == 1)
      ro.models |= FF_REGRESS_BIT(FF_REGRESS_ASSOCIATION);
  } else {
    /* Without a particle count only the empirical line can be fitted. */
    in.p.nu = 1;
    ro.models = FF_REGRESS_BIT(FF_REGRESS_SQRT_LINEAR);
  }
  g->status = ff_regress_solute(&in, &ro, &g->reg, &g->diag);
  if (g->status == FF_OK && g->reg.has_particles && o->mc_fit_draws > 0
      && in.u_i != NULL) {
    struct ff_diag md = FF_DIAG_INIT;
    if (ff_regress_monte_carlo(&in, g->reg.particles_model, &ro,
                               o->mc_fit_draws, o->seed, &g->mc, &md)
        == FF_OK)
      g->has_mc = 1;
  }
done:
  free(m);
  free(i);
  free(u);
  free(um);
}

static void fit_unknown(struct ff_series *s, struct ff_series_unknown *g,
                        const struct ff_series_opts *o)
{
  double *c = malloc(g->n * sizeof *c), *mm = malloc(g->n * sizeof *mm);
  double *u = malloc(g->n * sizeof *u);

  if (c == NULL || mm == NULL || u == NULL) {
    g->status = ff_diag_set(&g->diag, FF_EIO, NULL, "out of memory");
  } else {
    for (size_t k = 0; k < g->n; k++) {
      const struct ff_series_run *r = &s->runs[g->runs[k]];
      c[k] = r->conc_g_kg;
      mm[k] = r->mass.m_g_mol;
      u[k] = r->mass.u_m_g_mol;
    }
    g->status = ff_regress_molar_mass(c, mm, u, g->n, o->confidence, &g->mm,
                                      &g->diag);
  }
  free(c);
  free(mm);
  free(u);
}

/* The groups are independent: item k < n_solutes fits solute k, the rest
 * the unknowns; each reads the runs and writes only its own group. */
struct fit_job {
  struct ff_series *s;
  const struct ff_series_opts *o;
};

static void fit_one(void *ctx, size_t k)
{
  const struct fit_job *j = ctx;

  if (k < j->s->n_solutes)
    fit_solute(j->s, &j->s->solutes[k], j->o);
  else
    fit_unknown(j->s, &j->s->unknowns[k - j->s->n_solutes], j->o);
}

int series_fit(struct ff_series *s, const struct ff_sheet *sh,
               const struct ff_series_opts *o)
{
  char (*keys)[2][128] = calloc(s->n_runs + 1, sizeof *keys);
  char (*ukeys)[2][128] = calloc(s->n_runs + 1, sizeof *ukeys);
  size_t nk = 0, nu = 0;
  int st = FF_OK;

  s->solutes = calloc(s->n_runs + 1, sizeof *s->solutes);
  s->unknowns = calloc(s->n_runs + 1, sizeof *s->unknowns);
  if (keys == NULL || ukeys == NULL || s->solutes == NULL
      || s->unknowns == NULL) {
    st = FF_EIO;
    goto done;
  }
  for (size_t k = 0; k < s->n_runs && st == FF_OK; k++) {
    const struct ff_series_run *r = &s->runs[k];
    const struct ff_sheet_row *row = &sh->row[r->row];
    long g;

    if (r->status != FF_OK)
      continue;
    if (row->role == FF_SHEET_SAMPLE) {
      g = group_of(keys, &nk, row->solute, r->solvent->name);
      struct ff_series_solute *sg = &s->solutes[g];
      if (sg->n == 0) {
        snprintf(sg->solute, sizeof sg->solute, "%s", row->solute);
        snprintf(sg->solvent, sizeof sg->solvent, "%s", r->solvent->name);
      }
      if (sg->particles_known && r->particles_known
          && (r->particles.nu != sg->particles.nu
              || r->particles.z_plus != sg->particles.z_plus)
          && strstr(sg->particles_how, "runs disagree") == NULL) {
        size_t used = strlen(sg->particles_how);
        snprintf(sg->particles_how + used, sizeof sg->particles_how - used,
                 "; runs disagree, the first run's count is used");
      }
      if (!sg->particles_known && r->particles_known) {
        sg->particles = r->particles;
        sg->particles_known = 1;
        snprintf(sg->particles_how, sizeof sg->particles_how, "%s",
                 r->particles_how);
      } else if (!sg->particles_known && sg->particles_how[0] == '\0') {
        snprintf(sg->particles_how, sizeof sg->particles_how, "%s",
                 r->particles_how);
      }
      if (append(&sg->runs, &sg->n, k) != 0)
        st = FF_EIO;
    } else if (row->role == FF_SHEET_UNKNOWN) {
      g = group_of(ukeys, &nu, row->solute, r->solvent->name);
      struct ff_series_unknown *ug = &s->unknowns[g];
      if (ug->n == 0) {
        snprintf(ug->solute, sizeof ug->solute, "%s", row->solute);
        snprintf(ug->solvent, sizeof ug->solvent, "%s", r->solvent->name);
      }
      if (append(&ug->runs, &ug->n, k) != 0)
        st = FF_EIO;
    }
  }
  s->n_solutes = nk;
  s->n_unknowns = nu;
  if (st != FF_OK)
    goto done;
  {
    struct fit_job job = { s, o };
    ff_parallel_for(nk + nu, fit_one, &job);
  }
  for (size_t k = 0; k < nk; k++)
    if (s->solutes[k].status == FF_EIO)
      st = FF_EIO;
  for (size_t k = 0; k < nu; k++)
    if (s->unknowns[k].status == FF_EIO)
      st = FF_EIO;
done:
  free(keys);
  free(ukeys);
  return st;
}
