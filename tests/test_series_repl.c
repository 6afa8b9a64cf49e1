/* test_series_repl.c - replicate groups of the series pipeline on runs built
 * by hand: the statistics against hand arithmetic, the grouping rule (role,
 * solute, solvent, molality; blanks, failed runs and second readings of one
 * freeze left out), the scatter flag, and the JSON array. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <criterion/criterion.h>
#include <gsl/gsl_errno.h>

#include "frostfit/series.h"

/* The statistics are plain arithmetic (common practice, no source): the
 * expected values below are worked by hand in each test's comment. Slack
 * for summation order only. */
#define TOL 1e-12

#define MAXRUNS 12

struct hand {
  struct ff_solvent water;
  struct ff_sheet sh;
  struct ff_sheet_row rows[MAXRUNS];
  struct ff_series_run runs[MAXRUNS];
  struct ff_series s;
};

static void hand_init(struct hand *h)
{
  gsl_set_error_handler_off();
  memset(h, 0, sizeof *h);
  snprintf(h->water.name, sizeof h->water.name, "water");
  snprintf(h->sh.path, sizeof h->sh.path, "hand.csv");
  h->sh.row = h->rows;
  h->s.sheet = &h->sh;
  h->s.runs = h->runs;
}

/* One run with a result; each reads its own freeze (its own dataset). */
static struct ff_series_run *add(struct hand *h, const char *id,
                                 enum ff_sheet_role role, const char *solute,
                                 double m, double dt, double u, double vh_i)
{
  size_t k = h->sh.n++;
  struct ff_sheet_row *row = &h->rows[k];
  struct ff_series_run *r = &h->runs[k];

  cr_assert_lt(k, MAXRUNS);
  row->line = k + 2;
  snprintf(row->run, sizeof row->run, "%s", id);
  snprintf(row->solvent, sizeof row->solvent, "water");
  snprintf(row->solute, sizeof row->solute, "%s", solute);
  snprintf(row->channel, sizeof row->channel, "1");
  row->role = role;
  row->cycle = 1;
  row->blank_row = -1;
  r->row = k;
  r->status = FF_OK;
  r->solvent = &h->water;
  r->has_event = 1;
  r->event.cycle = 1;
  r->dataset = k;
  r->tf_c = -dt;
  r->depression_k = dt;
  r->u_depression_k = u;
  r->molality_mol_kg = m;
  r->conc_g_kg = NAN;
  r->th.vant_hoff_i = vh_i;
  r->th.u_vant_hoff_i = NAN;
  r->mc_u_vant_hoff_i = NAN;
  h->s.n_runs = h->sh.n;
  return r;
}

static void group(struct hand *h)
{
  cr_assert_eq(ff_series_replicates(&h->s), FF_OK);
}

static void hand_release(struct hand *h)
{
  for (size_t k = 0; k < h->s.n_repl; k++)
    free(h->s.repl[k].runs);
  free(h->s.repl);
}

static void expect(double got, double want, const char *what)
{
  cr_expect(fabs(got - want) <= TOL * fmax(1.0, fabs(want)),
            "%s: got %.15g, hand arithmetic gives %.15g", what, got, want);
}

/*
 * dT = 0.1860, 0.1866, 0.1854 K, each u 0.0004 K; i = 1.000, 1.003, 0.997.
 *   mean = 0.5580/3 = 0.1860; deviations 0, +0.0006, -0.0006;
 *   s^2 = (0.36e-6 + 0.36e-6)/2 = 3.6e-7, s = 6.0e-4, se = 6e-4/sqrt(3);
 *   equal weights: weighted mean 0.1860, u = 0.0004/sqrt(3);
 *   chi2 = 7.2e-7/1.6e-7 = 4.5 with 2 dof; for 2 dof Q(x) = exp(-x/2),
 *   p = exp(-2.25) = 0.1054 (not below 0.01: no flag); R = sqrt(2.25) = 1.5;
 *   i: mean 1.000, s = sqrt((9e-6 + 9e-6)/2) = 0.003.
 */
Test(series_repl, three_cycles_match_hand_arithmetic)
{
  struct hand h;

  hand_init(&h);
  add(&h, "A1", FF_SHEET_SAMPLE, "urea", 0.100, 0.1860, 0.0004, 1.000);
  add(&h, "A2", FF_SHEET_SAMPLE, "urea", 0.100, 0.1866, 0.0004, 1.003);
  add(&h, "A3", FF_SHEET_SAMPLE, "urea", 0.100, 0.1854, 0.0004, 0.997);
  group(&h);
  cr_assert_eq(h.s.n_repl, 1);
  const struct ff_series_repl *g = &h.s.repl[0];
  cr_assert_eq(g->n, 3);
  cr_expect_eq(g->runs[0], 0);
  cr_expect_eq(g->runs[1], 1);
  cr_expect_eq(g->runs[2], 2);
  cr_expect_eq(g->role, FF_SHEET_SAMPLE);
  cr_expect_str_eq(g->solute, "urea");
  cr_expect_str_eq(g->solvent, "water");
  expect(g->molality_mol_kg, 0.100, "molality");
  cr_expect(isnan(g->conc_g_kg), "no concentration for a sample");
  expect(g->depression_mean_k, 0.1860, "mean dT");
  expect(g->depression_sd_k, 6.0e-4, "s(dT)");
  expect(g->depression_se_k, 6.0e-4 / sqrt(3.0), "s/sqrt(n)");
  expect(g->depression_weighted_k, 0.1860, "weighted mean");
  expect(g->u_depression_weighted_k, 0.0004 / sqrt(3.0), "u(weighted)");
  expect(g->chi2, 4.5, "chi2");
  cr_expect_eq(g->dof, 2);
  expect(g->p_value, exp(-2.25), "p");
  expect(g->birge_ratio, 1.5, "Birge ratio");
  expect(g->vant_hoff_i_mean, 1.000, "mean i");
  expect(g->vant_hoff_i_sd, 0.003, "s(i)");
  cr_expect_eq(g->flags, 0, "p = 0.105 must not be flagged");
  char note[256];
  cr_expect_str_empty(ff_series_repl_note(g, note, sizeof note));
  hand_release(&h);
}

/*
 * Unequal u: dT 0.1850 (u 0.0003) and 0.1870 (u 0.0006).
 *   w = 1/9e-8 and 1/3.6e-7, ratio 4:1: weighted mean
 *   (4 * 0.1850 + 0.1870)/5 = 0.1854; u = 1/sqrt(w1 + w2) = sqrt(7.2e-8);
 *   chi2 = 0.0004^2/9e-8 + 0.0016^2/3.6e-7 = 1.7778 + 7.1111 = 8.8889,
 *   1 dof: p = erfc(sqrt(chi2/2)) = 0.0029 < 0.01: flagged;
 *   R = sqrt(8.8889) = 2.98; s = 0.002/sqrt(2).
 */
Test(series_repl, scatter_beyond_u_is_flagged)
{
  struct hand h;
  char note[256];

  hand_init(&h);
  add(&h, "B1", FF_SHEET_SAMPLE, "NaCl", 0.050, 0.1850, 0.0003, 1.99);
  add(&h, "B2", FF_SHEET_SAMPLE, "NaCl", 0.050, 0.1870, 0.0006, 2.01);
  group(&h);
  cr_assert_eq(h.s.n_repl, 1);
  const struct ff_series_repl *g = &h.s.repl[0];
  double chi2 = 0.0004 * 0.0004 / 9e-8 + 0.0016 * 0.0016 / 3.6e-7;
  expect(g->depression_mean_k, 0.1860, "mean dT");
  expect(g->depression_sd_k, 0.002 / sqrt(2.0), "s(dT)");
  expect(g->depression_weighted_k, 0.1854, "weighted mean");
  expect(g->u_depression_weighted_k, sqrt(7.2e-8), "u(weighted)");
  expect(g->chi2, chi2, "chi2");
  cr_expect_eq(g->dof, 1);
  expect(g->p_value, erfc(sqrt(chi2 / 2)), "p");
  cr_expect_lt(g->p_value, 0.01);
  expect(g->birge_ratio, sqrt(chi2), "Birge ratio");
  cr_expect_eq(g->flags, FF_SERIES_REPL_SCATTER);
  ff_series_repl_note(g, note, sizeof note);
  cr_expect(strstr(note, "replicate scatter exceeds the stated "
                   "uncertainties (Birge ratio 2.98)") == note, "%s", note);
  cr_expect(strstr(note, "check stirring, probe seating, supercooling")
            != NULL, "%s", note);
  hand_release(&h);
}

/* Stats alone: a u of zero leaves the weighted numbers NaN and no flag;
 * a run without i leaves the i numbers NaN. */
Test(series_repl, no_weights_without_stated_u)
{
  struct ff_series_repl g;
  const double dt[] = { 0.52, 0.53 }, u[] = { 0.001, 0.0 };
  const double vh[] = { 1.0, NAN };

  memset(&g, 0, sizeof g);
  ff_series_repl_stats(&g, dt, u, vh, 2);
  expect(g.depression_mean_k, 0.525, "mean dT");
  cr_expect(isnan(g.depression_weighted_k));
  cr_expect(isnan(g.u_depression_weighted_k));
  cr_expect(isnan(g.chi2) && isnan(g.p_value) && isnan(g.birge_ratio));
  cr_expect(isnan(g.vant_hoff_i_mean) && isnan(g.vant_hoff_i_sd));
  cr_expect_eq(g.flags, 0);
}

Test(series_repl, blanks_never_grouped)
{
  struct hand h;

  hand_init(&h);
  add(&h, "W1", FF_SHEET_BLANK, "", NAN, 0.0001, 0.0003, NAN);
  add(&h, "W2", FF_SHEET_BLANK, "", NAN, 0.0002, 0.0003, NAN);
  /* Even with a molality and depression filled in, a blank stays out. */
  h.runs[0].molality_mol_kg = h.runs[1].molality_mol_kg = 1.0;
  group(&h);
  cr_expect_eq(h.s.n_repl, 0);
  hand_release(&h);
}

/* 1e-6 relative: 0.0500000 and 0.0500001 differ by 2e-6 (two solutions);
 * 0.05 and 0.05 * (1 + 1e-7) are one. Other role or solute: not grouped. */
Test(series_repl, only_the_same_solution_is_grouped)
{
  struct hand h;

  hand_init(&h);
  add(&h, "C1", FF_SHEET_SAMPLE, "NaCl", 0.0500000, 0.1760, 0.0004, 1.89);
  add(&h, "C2", FF_SHEET_SAMPLE, "NaCl", 0.0500001, 0.1761, 0.0004, 1.89);
  add(&h, "C3", FF_SHEET_STANDARD, "NaCl", 0.0500000, 0.1762, 0.0004, 1.89);
  add(&h, "C4", FF_SHEET_SAMPLE, "KCl", 0.0500000, 0.1763, 0.0004, 1.89);
  group(&h);
  cr_expect_eq(h.s.n_repl, 0, "different molality, role or solute");
  add(&h, "C5", FF_SHEET_SAMPLE, "nacl", 0.05 * (1 + 1e-7), 0.1758, 0.0004,
      1.89);
  group(&h);
  cr_assert_eq(h.s.n_repl, 1);
  cr_expect_eq(h.s.repl[0].n, 2);
  cr_expect_eq(h.s.repl[0].runs[0], 0);
  cr_expect_eq(h.s.repl[0].runs[1], 4);
  cr_expect_str_eq(h.s.repl[0].solute, "NaCl", "named after its first run");
  hand_release(&h);
}

Test(series_repl, failed_run_left_out)
{
  struct hand h;

  hand_init(&h);
  add(&h, "D1", FF_SHEET_SAMPLE, "urea", 0.2, 0.3720, 0.0004, 1.0);
  add(&h, "D2", FF_SHEET_SAMPLE, "urea", 0.2, 0.9999, 0.0004, 2.7);
  add(&h, "D3", FF_SHEET_SAMPLE, "urea", 0.2, 0.3724, 0.0004, 1.001);
  h.runs[1].status = FF_EUNTRUSTED;
  group(&h);
  cr_assert_eq(h.s.n_repl, 1);
  cr_expect_eq(h.s.repl[0].n, 2);
  cr_expect_eq(h.s.repl[0].runs[1], 2);
  expect(h.s.repl[0].depression_mean_k, 0.3722, "mean without the failed");
  h.runs[2].status = FF_EINPUT;
  group(&h);
  cr_expect_eq(h.s.n_repl, 0, "one good run left: no group");
  hand_release(&h);
}

/* Two rows reading the same freeze (same file, channel, cycle; another
 * method) are one measurement, not two; another cycle of it is a second. */
Test(series_repl, same_freeze_read_twice_is_not_a_replicate)
{
  struct hand h;

  hand_init(&h);
  add(&h, "E1", FF_SHEET_SAMPLE, "urea", 0.4, 0.7440, 0.0004, 1.0);
  add(&h, "E2", FF_SHEET_SAMPLE, "urea", 0.4, 0.7460, 0.0004, 1.0);
  h.runs[1].dataset = h.runs[0].dataset;
  group(&h);
  cr_expect_eq(h.s.n_repl, 0);
  h.rows[1].cycle = FF_SHEET_CYCLE_LAST;  /* "last" read cycle 1 */
  group(&h);
  cr_expect_eq(h.s.n_repl, 0, "cycle 'last' that is cycle 1: same freeze");
  h.rows[1].cycle = 2;
  h.runs[1].event.cycle = 2;
  group(&h);
  cr_expect_eq(h.s.n_repl, 1, "cycle 2 of the same tube is a replicate");
  hand_release(&h);
}

/* Unknowns: molality not known, grouped by g per kg instead. */
Test(series_repl, unknowns_grouped_by_concentration)
{
  struct hand h;

  hand_init(&h);
  add(&h, "X1", FF_SHEET_UNKNOWN, "additive X", NAN, 0.4170, 0.0005, NAN);
  add(&h, "X2", FF_SHEET_UNKNOWN, "additive X", NAN, 0.4172, 0.0005, NAN);
  add(&h, "X3", FF_SHEET_UNKNOWN, "additive X", NAN, 0.8346, 0.0006, NAN);
  h.runs[0].conc_g_kg = h.runs[1].conc_g_kg = 3.05;
  h.runs[2].conc_g_kg = 6.10;
  group(&h);
  cr_assert_eq(h.s.n_repl, 1);
  cr_expect_eq(h.s.repl[0].n, 2);
  expect(h.s.repl[0].conc_g_kg, 3.05, "concentration");
  cr_expect(isnan(h.s.repl[0].molality_mol_kg));
  cr_expect(isnan(h.s.repl[0].vant_hoff_i_mean), "no i for unknowns");
  hand_release(&h);
}

/* The JSON array: keys with units, run ids, flags, and null (never NaN)
 * where a number is missing. */
Test(series_repl, json_replicates_keys_and_no_nan)
{
  struct hand h;

  hand_init(&h);
  add(&h, "F1", FF_SHEET_SAMPLE, "NaCl", 0.050, 0.1850, 0.0003, 1.99);
  add(&h, "F2", FF_SHEET_SAMPLE, "NaCl", 0.050, 0.1870, 0.0006, 2.01);
  add(&h, "G1", FF_SHEET_SAMPLE, "urea", 0.100, 0.1860, 0.0004, NAN);
  add(&h, "G2", FF_SHEET_SAMPLE, "urea", 0.100, 0.1861, 0.0, NAN);
  group(&h);
  cr_assert_eq(h.s.n_repl, 2);
  json_t *j = ff_series_to_json(&h.s);
  cr_assert_not_null(j);
  json_t *rep = json_object_get(j, "replicates");
  cr_assert(json_is_array(rep));
  cr_assert_eq(json_array_size(rep), 2);
  static const char *const keys[] = {
    "role", "solute", "solvent", "molality_mol_kg", "concentration_g_kg",
    "n", "runs", "depression_mean_k", "depression_sd_k", "depression_se_k",
    "depression_weighted_k", "u_depression_weighted_k", "chi2", "dof",
    "p_value", "birge_ratio", "vant_hoff_i_mean", "vant_hoff_i_sd", "flags",
    "note" };
  for (size_t k = 0; k < 2; k++)
    for (size_t q = 0; q < sizeof keys / sizeof keys[0]; q++)
      cr_expect_not_null(json_object_get(json_array_get(rep, k), keys[q]),
                         "group %zu lacks '%s'", k, keys[q]);
  json_t *a = json_array_get(rep, 0), *b = json_array_get(rep, 1);
  cr_expect_str_eq(json_string_value(json_array_get(
                     json_object_get(a, "runs"), 1)), "F2");
  cr_expect_str_eq(json_string_value(json_array_get(
                     json_object_get(a, "flags"), 0)), "replicate_scatter");
  cr_expect(json_is_string(json_object_get(a, "note")));
  cr_expect(fabs(json_real_value(json_object_get(a, "depression_weighted_k"))
                 - 0.1854) < 1e-9);
  cr_expect_eq(json_array_size(json_object_get(b, "flags")), 0);
  cr_expect(json_is_null(json_object_get(b, "note")));
  cr_expect(json_is_null(json_object_get(b, "depression_weighted_k")));
  cr_expect(json_is_null(json_object_get(b, "p_value")));
  cr_expect(json_is_null(json_object_get(b, "vant_hoff_i_mean")));
  cr_expect(json_is_null(json_object_get(b, "concentration_g_kg")));
  char *text = json_dumps(j, 0);
  cr_assert_not_null(text);
  /* jansson refuses NaN (the key would go missing, caught above); the
   * text check guards against a number written by hand. */
  cr_expect(strstr(text, "nan") == NULL && strstr(text, "NaN") == NULL,
            "non-finite number in JSON");
  free(text);
  json_decref(j);
  hand_release(&h);
}
