/* series_repl.c - replicates in the series pipeline: runs of the same
 * solution grouped after the per-run results, their scatter weighed against
 * the stated uncertainties. Reads the runs; changes no run or fit. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_statistics_double.h>

#include "series_impl.h"

/*
 * The statistics (docs/methods.md, "Replicates"):
 *   mean  = sum(x)/n,  s^2 = sum((x - mean)^2)/(n - 1),  se = s/sqrt(n)
 *     (the Type A evaluation of JCGM 100:2008, 4.2);
 *   w_k = 1/u_k^2, xw = sum(w x)/sum(w), u(xw) = 1/sqrt(sum(w)),
 *   chi2 = sum(w (x - xw)^2) with n - 1 degrees of freedom,
 *   p = Q(chi2 | n - 1) (upper tail), R = sqrt(chi2/(n - 1)) (Birge ratio).
 */

/* Mean and sample standard deviation (GSL, two-pass about the mean, so the
 * small spread of close replicates is not lost to cancellation); NaN for
 * both when either is not finite, sd NaN for one value. */
static void mean_sd(const double *x, size_t n, double *mean, double *sd)
{
  *mean = gsl_stats_mean(x, 1, n);
  *sd = n >= 2 ? gsl_stats_sd_m(x, 1, n, *mean) : NAN;
  if (!isfinite(*mean) || !isfinite(*sd))
    *mean = *sd = NAN;
}

void ff_series_repl_stats(struct ff_series_repl *g, const double *dt_k,
                          const double *u_dt_k, const double *vh_i, size_t n)
{
  double sw = 0, swx = 0, chi2 = 0;
  int weights_ok = n >= 2;

  mean_sd(dt_k, n, &g->depression_mean_k, &g->depression_sd_k);
  g->depression_se_k = g->depression_sd_k / sqrt((double)n);
  mean_sd(vh_i, n, &g->vant_hoff_i_mean, &g->vant_hoff_i_sd);
  g->dof = n >= 1 ? n - 1 : 0;

  for (size_t k = 0; k < n; k++) {
    if (!(u_dt_k[k] > 0) || !isfinite(u_dt_k[k]) || !isfinite(dt_k[k])) {
      weights_ok = 0;
      break;
    }
    double w = 1.0 / (u_dt_k[k] * u_dt_k[k]);
    sw += w;
    swx += w * dt_k[k];
  }
  g->depression_weighted_k = g->u_depression_weighted_k = NAN;
  g->chi2 = g->p_value = g->birge_ratio = NAN;
  g->flags = 0;
  if (!weights_ok)
    return;
  double xw = swx / sw;
  for (size_t k = 0; k < n; k++) {
    double r = (dt_k[k] - xw) / u_dt_k[k];
    chi2 += r * r;
  }
  g->depression_weighted_k = xw;
  g->u_depression_weighted_k = 1.0 / sqrt(sw);
  g->chi2 = chi2;
  g->p_value = gsl_cdf_chisq_Q(chi2, (double)g->dof);
  g->birge_ratio = sqrt(chi2 / (double)g->dof);
  if (!isfinite(g->depression_weighted_k) || !isfinite(g->chi2)
      || !isfinite(g->p_value)) {
    g->depression_weighted_k = g->u_depression_weighted_k = NAN;
    g->chi2 = g->p_value = g->birge_ratio = NAN;
    return;
  }
  if (g->p_value < FF_SERIES_REPL_P_FLAG)
    g->flags |= FF_SERIES_REPL_SCATTER;
}

const char *ff_series_repl_note(const struct ff_series_repl *g, char *buf,
                                size_t n)
{
  if (n == 0)
    return buf;
  buf[0] = '\0';
  if (g->flags & FF_SERIES_REPL_SCATTER)
    snprintf(buf, n, "replicate scatter exceeds the stated uncertainties "
             "(Birge ratio %.2f): u(dT) may be underestimated - check "
             "stirring, probe seating, supercooling", g->birge_ratio);
  return buf;
}

/* ---- grouping ----
 * The rule (also in series.h and docs/formats/series-output.md): runs with
 * a result (FF_OK) of role sample, unknown or standard (never blank) that
 * share role, solvent and solute (case-insensitive) and whose molality
 * agrees within FF_SERIES_REPL_REL_TOL relative measured the same solution;
 * for unknowns, whose molality is not known, the concentration in g per kg
 * solvent stands in. A row reading a freeze already in the group (same
 * file, channel, cycle) is left out. Two runs or more make a group. */

static const char *solvent_of(const struct ff_series *s,
                              const struct ff_series_run *r)
{
  return r->solvent != NULL ? r->solvent->name : s->sheet->row[r->row].solvent;
}

/* What says "the same solution": molality, or for unknowns (molar mass
 * not known) the concentration in g per kg solvent. */
static double amount_of(const struct ff_series *s,
                        const struct ff_series_run *r)
{
  return s->sheet->row[r->row].role == FF_SHEET_UNKNOWN ? r->conc_g_kg
                                                        : r->molality_mol_kg;
}

static int eligible(const struct ff_series *s, const struct ff_series_run *r)
{
  enum ff_sheet_role role = s->sheet->row[r->row].role;

  return r->status == FF_OK
         && (role == FF_SHEET_SAMPLE || role == FF_SHEET_UNKNOWN
             || role == FF_SHEET_STANDARD)
         && isfinite(amount_of(s, r)) && amount_of(s, r) > 0
         && isfinite(r->depression_k);
}

static int same_solution(const struct ff_series *s,
                         const struct ff_series_run *a,
                         const struct ff_series_run *b)
{
  const struct ff_sheet_row *ra = &s->sheet->row[a->row];
  const struct ff_sheet_row *rb = &s->sheet->row[b->row];
  double xa = amount_of(s, a), xb = amount_of(s, b);

  return ra->role == rb->role
         && strcasecmp(ra->solute, rb->solute) == 0
         && strcasecmp(solvent_of(s, a), solvent_of(s, b)) == 0
         && fabs(xa - xb) <= FF_SERIES_REPL_REL_TOL * fmax(fabs(xa), fabs(xb));
}

/* Two rows reading the same freeze (same data file, channel and cycle;
 * e.g. another method) are one measurement read twice, not replicates.
 * The cycle is the event's own, so "last" and its number are the same. */
static int same_freeze(const struct ff_series_run *a,
                       const struct ff_series_run *b)
{
  return a->has_event && b->has_event && a->dataset == b->dataset
         && a->channel == b->channel && a->event.cycle == b->event.cycle;
}

static void groups_free(struct ff_series *s)
{
  for (size_t k = 0; k < s->n_repl; k++)
    free(s->repl[k].runs);
  free(s->repl);
  s->repl = NULL;
  s->n_repl = 0;
}

/* Fills group g from the runs it lists; 0, or -1 when out of memory. */
static int fill(const struct ff_series *s, struct ff_series_repl *g)
{
  double *x = malloc(3 * g->n * sizeof *x);
  const struct ff_series_run *first = &s->runs[g->runs[0]];
  const struct ff_sheet_row *row = &s->sheet->row[first->row];

  if (x == NULL)
    return -1;
  for (size_t k = 0; k < g->n; k++) {
    const struct ff_series_run *r = &s->runs[g->runs[k]];
    x[k] = r->depression_k;
    x[g->n + k] = r->u_depression_k;
    x[2 * g->n + k] = r->th.vant_hoff_i;
  }
  g->role = row->role;
  snprintf(g->solute, sizeof g->solute, "%s", row->solute);
  snprintf(g->solvent, sizeof g->solvent, "%s", solvent_of(s, first));
  g->molality_mol_kg = row->role == FF_SHEET_UNKNOWN
                       ? NAN : first->molality_mol_kg;
  g->conc_g_kg = row->role == FF_SHEET_UNKNOWN ? first->conc_g_kg : NAN;
  ff_series_repl_stats(g, x, x + g->n, x + 2 * g->n, g->n);
  free(x);
  return 0;
}

int ff_series_replicates(struct ff_series *s)
{
  unsigned char *taken = calloc(s->n_runs + 1, 1);
  size_t *members = malloc((s->n_runs + 1) * sizeof *members);
  int st = FF_OK;

  groups_free(s);
  if (taken == NULL || members == NULL) {
    st = FF_EIO;
    goto done;
  }
  /* Each group starts at its first run in sheet order; every later run
   * is compared with that first run (the tolerance is far below any
   * intended step between solutions, so the order does not matter). */
  for (size_t k = 0; k < s->n_runs; k++) {
    size_t m = 0;

    if (taken[k] || !eligible(s, &s->runs[k]))
      continue;
    members[m++] = k;
    for (size_t j = k + 1; j < s->n_runs; j++) {
      int again = 0;
      if (taken[j] || !eligible(s, &s->runs[j])
          || !same_solution(s, &s->runs[k], &s->runs[j]))
        continue;
      for (size_t i = 0; i < m; i++)
        again |= same_freeze(&s->runs[members[i]], &s->runs[j]);
      if (!again)
        members[m++] = j;
    }
    if (m < 2)
      continue;

    struct ff_series_repl *v = realloc(s->repl, (s->n_repl + 1) * sizeof *v);
    if (v == NULL) {
      st = FF_EIO;
      break;
    }
    s->repl = v;
    struct ff_series_repl *g = &s->repl[s->n_repl];
    memset(g, 0, sizeof *g);
    g->runs = malloc(m * sizeof *g->runs);
    if (g->runs == NULL) {
      st = FF_EIO;
      break;
    }
    s->n_repl++;
    memcpy(g->runs, members, m * sizeof *members);
    g->n = m;
    for (size_t i = 0; i < m; i++)
      taken[members[i]] = 1;
    if (fill(s, g) != 0) {
      st = FF_EIO;
      break;
    }
  }
done:
  if (st != FF_OK)
    groups_free(s);
  free(taken);
  free(members);
  return st;
}

void series_repl_release(struct ff_series *s)
{
  groups_free(s);
}
