/* test_series_probe.c - probe ids in the series pipeline: Kf from the
 * standards on the run's own probe, the pool of other probes with a note,
 * the blank-on-another-probe warning, and output unchanged without probes.
 * Sheet: tests/data/series/probes.csv on the simulated curves of water.csv
 * (tests/data/series/make.sh). */
#include <math.h>
#include <gsl/gsl_math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include <criterion/criterion.h>
#include <gsl/gsl_errno.h>

#include "frostfit/series.h"
#include "series_fixture.h"

/* probes.csv types the molality of standard S2 as 1.05 x that of S1, and
 * both read the same curve against the same blank curve: by construction
 * Kf(P2) = Kf(P1) / 1.05. */
#define GAIN_RATIO 1.05
/* Slack for the floating-point of dT / m and of the weighted sums only. */
#define TOL 1e-12

/* The Monte Carlo is not under test here: no draws. */
static void load(struct fixture *f, const char *sheet)
{
  struct ff_series_opts o = FF_SERIES_OPTS_DEFAULT;

  o.mc_draws = 0;
  o.mc_fit_draws = 0;
  fixture_load(f, sheet, o, 1);
}

/* The run with id id, which must have a result. */
static const struct ff_series_run *run(const struct fixture *f,
                                       const char *id)
{
  const struct ff_series_run *r = fixture_run(f, id);

  cr_assert_eq(r->status, FF_OK, "%s: %s", id, r->diag.msg);
  return r;
}

static const struct ff_series_kfcal *probe_cal(const struct fixture *f,
                                               const char *probe)
{
  for (size_t k = 0; k < f->s.n_kfcal_probe; k++)
    if (strcmp(f->s.kfcal_probe[k].probe, probe) == 0)
      return &f->s.kfcal_probe[k];
  cr_assert_fail("no calibration of probe %s", probe);
  return NULL;
}

static void expect_rel(double got, double want, const char *what)
{
  cr_expect(fabs(got - want) <= TOL * fabs(want), "%s: got %.15g, want "
            "%.15g", what, got, want);
}

Test(series_probe, kf_from_the_runs_own_probe)
{
  struct fixture f;

  load(&f, "tests/data/series/probes.csv");
  cr_assert_eq(f.status, FF_OK, "%s", f.d.msg);
  const struct ff_series_run *s1 = run(&f, "S1"), *s2 = run(&f, "S2");

  /* One standard per probe: each probe's Kf is its standard's own. */
  cr_assert_eq(f.s.n_kfcal_probe, 2);
  const struct ff_series_kfcal *p1 = probe_cal(&f, "P1");
  const struct ff_series_kfcal *p2 = probe_cal(&f, "P2");
  cr_expect_eq(p1->n, 1);
  cr_expect_str_eq(p1->runs, "S1");
  cr_expect_str_eq(p2->runs, "S2");
  cr_expect_str_eq(p2->probe, "P2", "the cell ' P2 ' is trimmed");
  expect_rel(p1->kf_k_kg_mol, s1->kf_cal_k_kg_mol, "Kf(P1) = Kf of S1");
  expect_rel(p1->u_kf_k_kg_mol, s1->u_kf_cal_k_kg_mol, "u Kf(P1)");
  expect_rel(p2->kf_k_kg_mol, s2->kf_cal_k_kg_mol, "Kf(P2) = Kf of S2");
  /* By construction (same depression, molality x 1.05). */
  expect_rel(p1->kf_k_kg_mol / p2->kf_k_kg_mol, GAIN_RATIO,
             "Kf(P1) / Kf(P2)");
  /* Clearly different: many standard uncertainties apart. */
  cr_expect(p1->kf_k_kg_mol - p2->kf_k_kg_mol
            > 5 * hypot(p1->u_kf_k_kg_mol, p2->u_kf_k_kg_mol));

  /* The pool as without probes: inverse-variance mean of both. With equal
   * relative u (u(dT)/dT alike, typed molalities exact) it is, by
   * construction, Kf(P1) (1 + 1.05) / (1 + 1.05^2). */
  cr_assert_eq(f.s.n_kfcal, 1);
  const struct ff_series_kfcal *pool = &f.s.kfcal[0];
  cr_expect_str_eq(pool->runs, "S1+S2");
  cr_expect_str_eq(pool->probe, "");
  expect_rel(pool->kf_k_kg_mol, p1->kf_k_kg_mol * (1 + GAIN_RATIO)
             / (1 + GAIN_RATIO * GAIN_RATIO), "pooled Kf");
  /* The two standards disagree by many u: the pool's u is the weighted
   * mean's 1/sqrt(sum w) times the Birge ratio sqrt(chi2 / (2 - 1)),
   * written out here from the standards' own Kf and u. One standard: no
   * ratio, no scaling. */
  {
    double w1 = 1.0 / gsl_pow_2(s1->u_kf_cal_k_kg_mol);
    double w2 = 1.0 / gsl_pow_2(s2->u_kf_cal_k_kg_mol);
    double mean = (w1 * s1->kf_cal_k_kg_mol + w2 * s2->kf_cal_k_kg_mol)
                  / (w1 + w2);
    double chi2 = w1 * gsl_pow_2(s1->kf_cal_k_kg_mol - mean)
                  + w2 * gsl_pow_2(s2->kf_cal_k_kg_mol - mean);

    cr_expect(sqrt(chi2) > 5.0, "constructed to disagree: chi2 %g", chi2);
    expect_rel(pool->birge_ratio, sqrt(chi2), "Birge ratio");
    expect_rel(pool->u_kf_k_kg_mol, sqrt(chi2) / sqrt(w1 + w2),
               "pooled u scaled by the Birge ratio");
    cr_expect(isnan(p1->birge_ratio) && isnan(p2->birge_ratio));
  }

  /* Samples on P1 and P2 take their own probe's Kf ("p1" is P1). */
  static const struct { const char *id, *probe; } own[] = {
    { "N1", "P1" }, { "N2", "P2" }, { "N5", "P1" } };
  for (size_t k = 0; k < 3; k++) {
    const struct ff_series_run *r = run(&f, own[k].id);
    const struct ff_series_kfcal *c = probe_cal(&f, own[k].probe);
    char from[256];
    snprintf(from, sizeof from, "%s on probe %s", c->runs, own[k].probe);
    cr_expect_eq(r->kf_source, FF_KF_STANDARD, "%s", own[k].id);
    expect_rel(r->kf_k_kg_mol, c->kf_k_kg_mol, own[k].id);
    expect_rel(r->u_kf_k_kg_mol, c->u_kf_k_kg_mol, own[k].id);
    cr_expect_str_eq(r->kf_from, from, "%s", own[k].id);
    cr_expect_str_eq(r->kf_probe, own[k].probe, "%s", own[k].id);
    cr_expect_eq(r->flags & FF_SERIES_RUN_KF_OTHER_PROBES, 0, "%s",
                 own[k].id);
    /* i follows the Kf used: i = dT / (Kf m) for nu = 2 (thermo.h). */
    expect_rel(r->th.vant_hoff_i, r->depression_k
               / (r->kf_k_kg_mol * r->molality_mol_kg), own[k].id);
  }

  /* P3 has no standard: the pool, with the note and the flag. */
  const struct ff_series_run *n3 = run(&f, "N3");
  expect_rel(n3->kf_k_kg_mol, pool->kf_k_kg_mol, "N3 Kf");
  cr_expect_str_eq(n3->kf_from, "S1+S2, pooled: no standard on probe P3");
  cr_expect_str_eq(n3->kf_probe, "");
  cr_expect(n3->flags & FF_SERIES_RUN_KF_OTHER_PROBES);

  /* No probe id: the pool exactly as without a probe column. */
  const struct ff_series_run *n4 = run(&f, "N4");
  expect_rel(n4->kf_k_kg_mol, pool->kf_k_kg_mol, "N4 Kf");
  cr_expect_str_eq(n4->kf_from, "S1+S2");
  cr_expect_eq(n4->flags, 0);

  /* The standards themselves: i against the table, as before. */
  cr_expect_eq(s1->kf_source, FF_KF_TABLE);
  cr_expect_str_eq(s1->kf_from, "water");
  unload(&f);
}

Test(series_probe, blank_on_another_probe_is_flagged)
{
  struct fixture f;
  char note[512];

  load(&f, "tests/data/series/probes.csv");
  cr_assert_eq(f.status, FF_OK, "%s", f.d.msg);
  /* N3 on P3 against W1 on P1: flagged, the numbers still there. */
  const struct ff_series_run *n3 = run(&f, "N3");
  cr_expect(n3->flags & FF_SERIES_RUN_BLANK_OTHER_PROBE);
  cr_expect(isfinite(n3->depression_k) && isfinite(n3->th.vant_hoff_i));
  ff_series_run_note(&f.s, n3, FF_SERIES_RUN_BLANK_OTHER_PROBE, note,
                     sizeof note);
  cr_expect_str_eq(note, "the blank 'W1' was measured on probe P1, this run "
                   "on probe P3: their calibration offsets do not cancel");
  cr_expect_str_eq(ff_series_run_flag_name(FF_SERIES_RUN_BLANK_OTHER_PROBE),
                   "blank_other_probe");
  /* Same probe (N1, S1 on P1; N2, S2 on P2), the run without one (N4), the
   * blank without one (N5 against W3), a blank itself: no flag. */
  static const char *const clean[] = { "N1", "N2", "S1", "S2", "N4", "N5",
                                       "W1", "W3" };
  for (size_t k = 0; k < sizeof clean / sizeof clean[0]; k++) {
    const struct ff_series_run *r = run(&f, clean[k]);
    cr_expect_eq(r->flags & FF_SERIES_RUN_BLANK_OTHER_PROBE, 0, "%s",
                 clean[k]);
    cr_expect_str_eq(ff_series_run_note(&f.s, r,
                                        FF_SERIES_RUN_BLANK_OTHER_PROBE,
                                        note, sizeof note), "", "%s",
                     clean[k]);
  }
  /* The same depression as N4, which reads the same curve: a warning. */
  expect_rel(n3->depression_k, run(&f, "N4")->depression_k, "N3 dT");
  unload(&f);
}

Test(series_probe, json_probe_keys)
{
  struct fixture f;

  load(&f, "tests/data/series/probes.csv");
  json_t *j = ff_series_to_json(&f.s);
  cr_assert_not_null(j);
  json_t *runs = json_object_get(j, "runs");
  json_t *w3 = json_array_get(runs, 2), *n1 = json_array_get(runs, 5);
  json_t *n3 = json_array_get(runs, 7);
  cr_assert_str_eq(json_string_value(json_object_get(n1, "run")), "N1");
  cr_expect_str_eq(json_string_value(json_object_get(n1, "probe")), "P1");
  cr_expect(json_is_null(json_object_get(w3, "probe")));
  cr_expect_str_eq(json_string_value(json_object_get(n1, "kf_probe")), "P1");
  cr_expect_str_eq(json_string_value(json_object_get(n1, "kf_from")),
                   "S1 on probe P1");
  cr_expect_eq(json_array_size(json_object_get(n1, "warnings")), 0);
  cr_assert_str_eq(json_string_value(json_object_get(n3, "run")), "N3");
  cr_expect(json_is_null(json_object_get(n3, "kf_probe")));
  json_t *fl = json_object_get(n3, "flags");
  cr_assert_eq(json_array_size(fl), 2);
  cr_expect_str_eq(json_string_value(json_array_get(fl, 0)),
                   "blank_other_probe");
  cr_expect_str_eq(json_string_value(json_array_get(fl, 1)),
                   "kf_other_probes");
  cr_expect_eq(json_array_size(json_object_get(n3, "warnings")), 2);
  json_t *bp = json_object_get(j, "kf_calibrations_by_probe");
  cr_assert_eq(json_array_size(bp), 2);
  cr_expect_str_eq(json_string_value(json_object_get(json_array_get(bp, 1),
                                                     "probe")), "P2");
  cr_expect_str_eq(json_string_value(json_object_get(json_array_get(bp, 1),
                                                     "standards")), "S2");
  cr_expect_eq(json_array_size(json_object_get(j, "kf_calibrations")), 1);
  json_decref(j);
  unload(&f);
}

/* Without a 'probe' column nothing of this appears: no keys, no flags, the
 * pooled Kf named as before (standard.csv: standard S1, unknown U2). */
Test(series_probe, no_probe_column_no_probe_output)
{
  struct fixture f;

  load(&f, "tests/data/series/standard.csv");
  cr_assert_eq(f.status, FF_OK, "%s", f.d.msg);
  cr_expect_eq(f.s.n_kfcal_probe, 0);
  const struct ff_series_run *u2 = run(&f, "U2");
  cr_expect_str_eq(u2->kf_from, "S1");
  cr_expect_eq(u2->flags, 0);
  json_t *j = ff_series_to_json(&f.s);
  cr_assert_not_null(j);
  json_t *r = json_array_get(json_object_get(j, "runs"), 2);
  cr_expect_null(json_object_get(r, "probe"));
  cr_expect_null(json_object_get(r, "kf_probe"));
  cr_expect_null(json_object_get(r, "warnings"));
  cr_expect_null(json_object_get(j, "kf_calibrations_by_probe"));
  json_decref(j);
  unload(&f);
}
