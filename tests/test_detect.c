/* test_detect.c - freeze events and freezing points from cooling curves:
 * the standard constructions on curves whose answer is known by
 * construction, the supercooling physics against published rules, and the
 * detector on fixed-seed curves from the simulator (the simulator's true
 * freezing point is Tf0 - i Kf m by construction). The accuracy over many
 * curves is measured by bench/accuracy.c, not asserted here. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>

#include "frostfit/detect.h"
#include "frostfit/simulate.h"
#include "frostfit/solvent.h"

/* Frozen mass fraction per kelvin of supercooling for water, cp/L:
 * 4.2194 / 333.43 = 0.01266 per K (REFERENCES.md 7.1 table: IAPWS-95/06
 * via python3-iapws, computed); the classic rule is 1/80 = 0.0125 per K
 * (Proc. Soc. Exp. Biol. Med. 28, undercooling correction, [F17]). */
#define WATER_FROZEN_PER_K 0.01266
#define CLASSIC_FROZEN_PER_K (1.0 / 80.0)

/* Loose, noise-proof bound for the fixed-seed curves: the benchmark's 95th
 * percentile for noise <= 5 mK is about 2 mK, so 3 mK cannot flicker. */
#define AUTO_TOL_K 0.003

static void setup(void)
{
  gsl_set_error_handler_off();
}

struct curve {
  struct ff_sim_result r;
  double *t, *y;
  size_t n;
};

/* Simulates p and compacts the dropouts away, as the CLI does. */
static void simulate(const struct ff_sim_params *p, struct curve *c)
{
  struct ff_diag d = FF_DIAG_INIT;

  memset(c, 0, sizeof *c);
  cr_assert_eq(ff_simulate_run(p, &c->r, &d), FF_OK, "simulate: %s", d.msg);
  c->t = malloc(c->r.n * sizeof *c->t);
  c->y = malloc(c->r.n * sizeof *c->y);
  cr_assert(c->t && c->y);
  for (size_t i = 0; i < c->r.n; i++)
    if (isfinite(c->r.temp_c[i])) {
      c->t[c->n] = c->r.t_s[i];
      c->y[c->n++] = c->r.temp_c[i];
    }
}

static void curve_release(struct curve *c)
{
  ff_sim_result_release(&c->r);
  free(c->t);
  free(c->y);
}

static void detect(const struct curve *c, const struct ff_solvent *s,
                   struct ff_event_list *l)
{
  struct ff_detect_params p = FF_DETECT_PARAMS_DEFAULT;
  struct ff_diag d = FF_DIAG_INIT;

  p.solvent = s;
  cr_assert_eq(ff_detect_run(c->t, c->y, c->n, &p, l, &d), FF_OK, "%s",
               d.msg);
}

static void water_params(struct ff_sim_params *p, double molality, double i,
                         double supercool)
{
  ff_sim_params_default(p);
  p->molality_mol_kg = molality;
  p->vant_hoff_i = i;
  p->supercool_k = supercool;
  p->start_c = ff_sim_true_fp_c(p) + 5.0;
  p->bath_c = ff_sim_true_fp_c(p) - supercool - 4.0;
  p->noise_k = 0.002;
  p->probe_lag_s = 2.0;
  p->seed = 20261201;
}

/* ---- simulated curves --------------------------------------------- */

Test(detect, pure_water_within_3_mk, .init = setup)
{
  struct ff_sim_params p;
  struct curve c;
  struct ff_event_list l = FF_EVENT_LIST_INIT;

  water_params(&p, 0.0, 1.0, 1.2);
  simulate(&p, &c);
  detect(&c, NULL, &l);
  cr_assert_eq(l.n, 1, "one freeze, found %zu", l.n);
  cr_assert(l.v[0].trusted, "%s", l.v[0].status_reason);
  cr_expect_float_eq(l.v[0].freezing_point_c, c.r.true_fp_c, AUTO_TOL_K,
                     "got %.5f C, true %.5f C (%s)", l.v[0].freezing_point_c,
                     c.r.true_fp_c, ff_method_name(l.v[0].method));
  cr_expect_float_eq(l.v[0].supercooling_k, 1.2, 0.1,
                     "supercooling %.3f K", l.v[0].supercooling_k);
  ff_event_list_release(&l);
  curve_release(&c);
}

Test(detect, salt_solution_2k_supercooling_within_3_mk, .init = setup)
{
  struct ff_sim_params p;
  struct curve c;
  struct ff_event_list l = FF_EVENT_LIST_INIT;
  const struct ff_event *e;

  water_params(&p, 0.15, 2.0, 2.0);
  simulate(&p, &c);
  detect(&c, NULL, &l);
  cr_assert_eq(l.n, 1);
  e = &l.v[0];
  cr_assert(e->trusted, "%s", e->status_reason);
  cr_expect_eq(e->method, FF_METHOD_MODEL, "auto chose %s: %s",
               ff_method_name(e->method), e->method_reason);
  cr_expect_float_eq(e->freezing_point_c, c.r.true_fp_c, AUTO_TOL_K,
                     "got %.5f C, true %.5f C", e->freezing_point_c,
                     c.r.true_fp_c);
  /* The naive readings sit more than 5 mK off on this curve: the test
   * could tell a model that silently fell back to them. */
  cr_expect_gt(fabs(e->est[FF_METHOD_PEAK].value_c - c.r.true_fp_c), 0.005);
  cr_expect_gt(fabs(e->est[FF_METHOD_INTERSECT].value_c - c.r.true_fp_c),
               0.005);
  cr_expect(e->u_freezing_point_k > 0.0 && e->u_freezing_point_k < 0.003,
            "u = %g K", e->u_freezing_point_k);
  /* The Newton fit finds the simulated bath and time constant. */
  cr_expect_float_eq(e->liquid.bath_c, p.bath_c, 0.05);
  cr_expect_float_eq(e->liquid.tau_s, p.tau_s, 2.0);
  ff_event_list_release(&l);
  curve_release(&c);
}

Test(detect, cyclohexane_solution_within_3_mk, .init = setup)
{
  struct ff_solvent_table tab = FF_SOLVENT_TABLE_INIT;
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_sim_params p;
  const struct ff_solvent *s;
  struct curve c;
  struct ff_event_list l = FF_EVENT_LIST_INIT;

  cr_assert_eq(ff_solvent_table_load(&tab, "datasets/solvents.csv", &d),
               FF_OK, "%s", d.msg);
  s = ff_solvent_find(&tab, "cyclohexane");
  cr_assert_not_null(s);
  ff_sim_params_default(&p);
  p.solvent = *s;
  p.molality_mol_kg = 0.05;
  p.supercool_k = 1.0;
  p.start_c = ff_sim_true_fp_c(&p) + 5.0;
  p.bath_c = ff_sim_true_fp_c(&p) - 5.0;
  p.noise_k = 0.002;
  p.seed = 77;
  simulate(&p, &c);
  detect(&c, s, &l);
  cr_assert_eq(l.n, 1);
  cr_assert(l.v[0].trusted, "%s", l.v[0].status_reason);
  cr_expect_float_eq(l.v[0].freezing_point_c, c.r.true_fp_c, AUTO_TOL_K,
                     "got %.5f C, true %.5f C (%s)", l.v[0].freezing_point_c,
                     c.r.true_fp_c, ff_method_name(l.v[0].method));
  /* The model's pure-solvent freezing point is cyclohexane's own (6.54 C
   * in datasets/solvents.csv, the simulator's Tf0). */
  cr_expect_float_eq(l.v[0].model_tf0_c, s->tf_c, 0.05, "Tf0 %.4f C",
                     l.v[0].model_tf0_c);
  ff_event_list_release(&l);
  /* Read with water's constants, the same curve must not pass. */
  detect(&c, NULL, &l);
  cr_assert_eq(l.n, 1);
  cr_expect(l.v[0].flags & FF_FLAG_SOLVENT_MISMATCH, "flags %x",
            l.v[0].flags);
  cr_expect_not(l.v[0].trusted);
  ff_event_list_release(&l);
  curve_release(&c);
  ff_solvent_table_release(&tab);
}

Test(detect, several_cycles_give_several_events, .init = setup)
{
  struct ff_sim_params p;
  struct curve c;
  struct ff_event_list l = FF_EVENT_LIST_INIT;

  water_params(&p, 0.1, 1.0, 1.0);
  p.cycles = 3;
  p.freeze_s = 400.0;
  simulate(&p, &c);
  detect(&c, NULL, &l);
  cr_assert_eq(l.n, 3, "three freezes, found %zu", l.n);
  for (size_t k = 0; k < l.n; k++) {
    cr_expect_eq(l.v[k].cycle, k + 1);
    cr_expect(l.v[k].trusted, "cycle %zu: %s", k + 1, l.v[k].status_reason);
    cr_expect_float_eq(l.v[k].nucleation_time_s, c.r.nucleation_t_s[k], 3.0,
                       "cycle %zu nucleation %.1f s, simulated %.1f s", k + 1,
                       l.v[k].nucleation_time_s, c.r.nucleation_t_s[k]);
    cr_expect_float_eq(l.v[k].freezing_point_c, c.r.true_fp_c, AUTO_TOL_K);
  }
  ff_event_list_release(&l);
  curve_release(&c);
}

Test(detect, freeze_at_end_of_file_is_not_trusted, .init = setup)
{
  struct ff_sim_params p;
  struct curve c;
  struct ff_event_list l = FF_EVENT_LIST_INIT;

  water_params(&p, 0.15, 2.0, 1.5);
  p.freeze_s = 25.0;            /* the record stops 25 s after nucleation */
  simulate(&p, &c);
  detect(&c, NULL, &l);
  cr_assert_eq(l.n, 1, "the freeze is still seen");
  cr_expect_not(l.v[0].trusted);
  cr_expect(l.v[0].flags & FF_FLAG_AT_END, "flags %x", l.v[0].flags);
  cr_expect(l.v[0].flags & FF_FLAG_BRANCH_SHORT);
  cr_expect(strlen(l.v[0].status_reason) > 0);
  ff_event_list_release(&l);
  curve_release(&c);
}

/* No supercooling on a simulated curve (2 s probe lag): the energy balance
 * still reads it; the two-line break, whose corner the lag and the Newton
 * curvature round, must either read it or refuse with the reason -- never
 * give a number far from the truth. */
Test(detect, no_supercooling_is_read_or_refused, .init = setup)
{
  struct ff_sim_params p;
  struct curve c;
  struct ff_event_list l = FF_EVENT_LIST_INIT;

  water_params(&p, 0.15, 2.0, 0.0);
  simulate(&p, &c);
  detect(&c, NULL, &l);
  cr_assert_eq(l.n, 1);
  cr_expect(l.v[0].flags & FF_FLAG_NO_NUCLEATION);
  cr_expect(l.v[0].trusted, "%s", l.v[0].status_reason);
  cr_expect_float_eq(l.v[0].freezing_point_c, c.r.true_fp_c, AUTO_TOL_K,
                     "got %.5f C (%s)", l.v[0].freezing_point_c,
                     ff_method_name(l.v[0].method));
  const struct ff_estimate *b = &l.v[0].est[FF_METHOD_BREAK];
  if (b->ok)
    cr_expect_float_eq(b->value_c, c.r.true_fp_c, 0.01, "break %.5f C",
                       b->value_c);
  else
    cr_expect(strstr(b->why, "rounded") != NULL, "%s", b->why);
  ff_event_list_release(&l);
  curve_release(&c);
}

/* Two straight segments meeting in a sharp corner (common practice, no
 * source: the slope-break reading for curves without supercooling): liquid
 * 3.0 - 0.02 t C down to the corner at t = 170 s, -0.4 C, then the
 * freezing branch -0.4 - 0.0005 (t - 170) C. The break reads the corner. */
Test(detect, slope_break_by_construction, .init = setup)
{
  enum { N = 601 };
  double t[N], y[N];
  struct ff_event_list l = FF_EVENT_LIST_INIT;
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_detect_params p = FF_DETECT_PARAMS_DEFAULT;

  for (int i = 0; i < N; i++) {
    t[i] = i;
    y[i] = i <= 170 ? 3.0 - 0.02 * i : -0.40 - 0.0005 * (i - 170);
  }
  cr_assert_eq(ff_detect_run(t, y, N, &p, &l, &d), FF_OK, "%s", d.msg);
  cr_assert_eq(l.n, 1);
  cr_expect(l.v[0].flags & FF_FLAG_NO_NUCLEATION);
  cr_assert(l.v[0].est[FF_METHOD_BREAK].ok, "%s",
            l.v[0].est[FF_METHOD_BREAK].why);
  cr_expect_float_eq(l.v[0].est[FF_METHOD_BREAK].value_c, -0.40, 1e-6,
                     "break %.9f C", l.v[0].est[FF_METHOD_BREAK].value_c);
  cr_expect_float_eq(l.v[0].break_time_s, 170.0, 1e-3);
  ff_event_list_release(&l);
}

/* A slow probe (45 s time constant) and a short record hide the
 * nucleation and round the corner: no method can be trusted, and the
 * event must say so instead of giving the bend's arbitrary reading (it
 * was 65 mK off before this check existed). */
Test(detect, lagging_probe_is_not_trusted, .init = setup)
{
  struct ff_sim_params p;
  struct curve c;
  struct ff_event_list l = FF_EVENT_LIST_INIT;

  water_params(&p, 0.10, 1.866, 1.8);
  p.probe_lag_s = 45.0;
  p.freeze_s = 200.0;
  simulate(&p, &c);
  detect(&c, NULL, &l);
  cr_assert_eq(l.n, 1);
  if (l.v[0].trusted)
    cr_expect_float_eq(l.v[0].freezing_point_c, c.r.true_fp_c, 0.005,
                       "trusted reading %.5f C (%s), true %.5f C",
                       l.v[0].freezing_point_c, ff_method_name(l.v[0].method),
                       c.r.true_fp_c);
  else
    cr_expect(strlen(l.v[0].status_reason) > 0);
  ff_event_list_release(&l);
  curve_release(&c);
}

/* A pure solvent's flat plateau runs into the thaw at the same level: every
 * cycle keeps its whole branch (a noise dip once cut the first one short). */
Test(detect, pure_solvent_cycles_keep_their_branch, .init = setup)
{
  struct ff_sim_params p;
  struct curve c;
  struct ff_event_list l = FF_EVENT_LIST_INIT;

  water_params(&p, 0.0, 1.0, 1.0);
  p.cycles = 3;
  p.freeze_s = 400.0;
  p.seed = 3;
  simulate(&p, &c);
  detect(&c, NULL, &l);
  cr_assert_eq(l.n, 3, "found %zu events", l.n);
  for (size_t k = 0; k < l.n; k++) {
    cr_expect(l.v[k].trusted, "cycle %zu: %s", k + 1, l.v[k].status_reason);
    cr_expect_gt(l.v[k].branch_end_s - l.v[k].branch_start_s, 300.0,
                 "cycle %zu branch %.0f-%.0f s", k + 1,
                 l.v[k].branch_start_s, l.v[k].branch_end_s);
    cr_expect_float_eq(l.v[k].freezing_point_c, 0.0, AUTO_TOL_K);
  }
  ff_event_list_release(&l);
  curve_release(&c);
}

/* A single wild reading during liquid cooling (a touched probe) is not a
 * nucleation; the real freeze later is still found. */
Test(detect, spike_is_not_a_freeze, .init = setup)
{
  struct ff_sim_params p;
  struct curve c;
  struct ff_event_list l = FF_EVENT_LIST_INIT;
  size_t k;

  water_params(&p, 0.15, 2.0, 1.5);
  simulate(&p, &c);
  for (k = 0; k < c.n && c.t[k] < 60.0; k++)
    ;
  c.y[k] += 0.8;               /* 60 s in: still liquid, well above Tf */
  c.y[k + 1] += 0.5;
  detect(&c, NULL, &l);
  cr_assert_eq(l.n, 1, "found %zu events", l.n);
  cr_expect_float_eq(l.v[0].nucleation_time_s, c.r.nucleation_t_s[0], 3.0);
  ff_event_list_release(&l);
  curve_release(&c);
}

/* A bath probe: Newton cooling to the bath temperature and nothing else. */
Test(detect, bath_probe_gives_no_event, .init = setup)
{
  enum { N = 1200 };
  double t[N], y[N];
  struct ff_event_list l = FF_EVENT_LIST_INIT;
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_detect_params p = FF_DETECT_PARAMS_DEFAULT;
  unsigned long s = 12345;

  for (int i = 0; i < N; i++) {
    /* small deterministic "noise" from an LCG, +-1.5 mK */
    s = s * 6364136223846793005UL + 1442695040888963407UL;
    t[i] = i;
    y[i] = -6.2 + 9.3 * exp(-i / 35.0)
           + 0.003 * ((double)((s >> 33) % 1000) / 1000.0 - 0.5);
  }
  cr_assert_eq(ff_detect_run(t, y, N, &p, &l, &d), FF_OK, "%s", d.msg);
  cr_expect_eq(l.n, 0, "found %zu events", l.n);
  ff_event_list_release(&l);
}

/* ---- the standard constructions, on curves known by construction ---- */

/*
 * Piecewise-linear cooling curve: liquid line T = 3.0 - 0.02 t until the
 * nucleation at t = 200 s, then the freezing line T = -0.40 - 0.0005
 * (t - 200). The intersection of the projected liquid and freezing lines
 * (ASTM D1177 "intersection of projections of the cooling curve and the
 * freezing curve", REFERENCES.md 7.2 [F9]) is at t = 3.3 / 0.0195 s,
 * T = 3.0 - 0.02 * 3.3 / 0.0195 C.
 */
Test(detect, intersection_of_projections_by_construction, .init = setup)
{
  enum { N = 601 };
  double t[N], y[N];
  struct ff_event_list l = FF_EVENT_LIST_INIT;
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_detect_params p = FF_DETECT_PARAMS_DEFAULT;
  double want = 3.0 - 0.02 * (3.3 / 0.0195);

  for (int i = 0; i < N; i++) {
    t[i] = i;
    y[i] = i < 200 ? 3.0 - 0.02 * i : -0.40 - 0.0005 * (i - 200);
  }
  cr_assert_eq(ff_detect_run(t, y, N, &p, &l, &d), FF_OK, "%s", d.msg);
  cr_assert_eq(l.n, 1);
  cr_assert(l.v[0].est[FF_METHOD_INTERSECT].ok, "%s",
            l.v[0].est[FF_METHOD_INTERSECT].why);
  /* exact lines, exact fits: only rounding remains */
  cr_expect_float_eq(l.v[0].est[FF_METHOD_INTERSECT].value_c, want, 1e-6,
                     "intersection %.9f C, constructed %.9f C",
                     l.v[0].est[FF_METHOD_INTERSECT].value_c, want);
  /* The freezing line taken back to the nucleation instant: the last
   * liquid reading, at 199 s. */
  cr_expect_float_eq(l.v[0].nucleation_time_s, 199.0, 1e-9);
  cr_expect_float_eq(l.v[0].est[FF_METHOD_EXTRAPOLATE].value_c,
                     -0.40 - 0.0005 * (199.0 - 200.0), 1e-6);
  ff_event_list_release(&l);
}

/*
 * Maximum after supercooling (ASTM D1177 "the freezing point is the
 * maximum temperature reached after supercooling", REFERENCES.md 7.2 [F9]):
 * liquid line to -1.3 C, recalescence to a flat top at -0.412 C for 20 s,
 * then the freezing branch falls. The peak reading is that top.
 */
Test(detect, maximum_after_supercooling_by_construction, .init = setup)
{
  enum { N = 601 };
  double t[N], y[N];
  struct ff_event_list l = FF_EVENT_LIST_INIT;
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_detect_params p = FF_DETECT_PARAMS_DEFAULT;

  for (int i = 0; i < N; i++) {
    t[i] = 0.5 * i;             /* 0.5 s sampling, untidy on purpose */
    if (t[i] < 150.0)
      y[i] = 2.2 - 0.0233333 * t[i];
    else if (t[i] < 152.0)
      y[i] = -1.3 + (t[i] - 150.0) * 0.444;
    else if (t[i] < 172.0)
      y[i] = -0.412;
    else
      y[i] = -0.412 - 0.0004 * (t[i] - 172.0);
  }
  cr_assert_eq(ff_detect_run(t, y, N, &p, &l, &d), FF_OK, "%s", d.msg);
  cr_assert_eq(l.n, 1);
  cr_expect_float_eq(l.v[0].est[FF_METHOD_PEAK].value_c, -0.412, 1e-9,
                     "peak %.9f C", l.v[0].est[FF_METHOD_PEAK].value_c);
  cr_expect_float_eq(l.v[0].peak_c, -0.412, 1e-9);
  /* the lowest reading: the start of the rise at 150 s */
  cr_expect_float_eq(l.v[0].t_min_c, -1.3, 1e-9);
  cr_expect_float_eq(l.v[0].nucleation_time_s, 150.0, 1e-9);
  ff_event_list_release(&l);
}

/*
 * The maximum after recalescence reads low by about f u delta, f = cp/L
 * the frozen fraction per kelvin of supercooling u (REFERENCES.md 7.1,
 * [F17]: delta_true = delta_obs (1 - u/80)). On a noise-free, lag-free
 * simulated solution the deficit is f u delta plus the heat the bath takes
 * while the sample warms back (the simulator's heat loss), so it is
 * bracketed by [1, 1.25] f u delta; the frozen fraction the energy balance
 * finds at the peak is bracketed likewise; the model removes the deficit.
 */
Test(detect, peak_deficit_follows_the_frozen_fraction_rule, .init = setup)
{
  struct ff_sim_params p;
  struct curve c;
  struct ff_event_list l = FF_EVENT_LIST_INIT;
  double delta, deficit, u = 1.7;

  cr_expect_float_eq(WATER_FROZEN_PER_K, CLASSIC_FROZEN_PER_K, 0.0003,
                     "cp/L and the 1/80 rule agree to 2 %%");
  water_params(&p, 0.15, 2.0, u);
  p.noise_k = 0.0;
  p.resolution_k = 0.0;
  p.probe_lag_s = 0.0;
  p.dt_s = 0.5;
  simulate(&p, &c);
  detect(&c, NULL, &l);
  cr_assert_eq(l.n, 1);
  delta = -c.r.true_fp_c;        /* Tf0 = 0 C for water */
  deficit = c.r.true_fp_c - l.v[0].est[FF_METHOD_PEAK].value_c;
  cr_expect(deficit >= WATER_FROZEN_PER_K * u * delta
            && deficit <= 1.25 * WATER_FROZEN_PER_K * u * delta,
            "deficit %.5f K, f u delta = %.5f K", deficit,
            WATER_FROZEN_PER_K * u * delta);
  cr_expect(l.v[0].frozen_fraction >= WATER_FROZEN_PER_K * u
            && l.v[0].frozen_fraction <= 1.25 * WATER_FROZEN_PER_K * u,
            "frozen fraction at the peak %.5f, f u = %.5f",
            l.v[0].frozen_fraction, WATER_FROZEN_PER_K * u);
  cr_expect_float_eq(l.v[0].est[FF_METHOD_MODEL].value_c, c.r.true_fp_c,
                     0.0005);
  ff_event_list_release(&l);
  curve_release(&c);
}

/* ---- input checks and names ----------------------------------------- */

Test(detect, too_few_points_is_untrusted, .init = setup)
{
  double t[10], y[10];
  struct ff_event_list l = FF_EVENT_LIST_INIT;
  struct ff_diag d = FF_DIAG_INIT;

  for (int i = 0; i < 10; i++) {
    t[i] = i;
    y[i] = 1.0 - 0.1 * i;
  }
  cr_expect_eq(ff_detect_run(t, y, 10, NULL, &l, &d), FF_EUNTRUSTED);
  cr_expect(strstr(d.msg, "10 readings") != NULL, "%s", d.msg);
  cr_expect_eq(l.n, 0);
}

Test(detect, nan_and_backwards_time_are_bad_input, .init = setup)
{
  double t[40], y[40];
  struct ff_event_list l = FF_EVENT_LIST_INIT;
  struct ff_diag d = FF_DIAG_INIT;

  for (int i = 0; i < 40; i++) {
    t[i] = i;
    y[i] = 1.0 - 0.01 * i;
  }
  y[17] = NAN;
  cr_expect_eq(ff_detect_run(t, y, 40, NULL, &l, &d), FF_EINPUT);
  cr_expect(strstr(d.msg, "18") != NULL, "%s", d.msg);
  y[17] = 0.5;
  t[30] = 29.0;
  ff_diag_clear(&d);
  cr_expect_eq(ff_detect_run(t, y, 40, NULL, &l, &d), FF_EINPUT);
  cr_expect_eq(l.n, 0);
}

Test(detect, names_and_flag_texts, .init = setup)
{
  enum ff_method m;

  for (int k = 0; k < FF_METHOD_COUNT; k++) {
    cr_expect_eq(ff_method_parse(ff_method_name((enum ff_method)k), &m), 0);
    cr_expect_eq((int)m, k);
  }
  cr_expect_eq(ff_method_parse("tangent", &m), -1);
  for (unsigned b = 0; b < FF_FLAG_COUNT; b++) {
    cr_expect_not_null(ff_flag_name(1u << b), "bit %u", b);
    cr_expect_not_null(ff_flag_text(1u << b), "bit %u", b);
  }
  cr_expect_null(ff_flag_text(1u << FF_FLAG_COUNT));
}
