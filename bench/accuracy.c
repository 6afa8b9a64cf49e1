/* bench/accuracy.c - accuracy of every freezing-point method against the
 * simulator's true freezing point, over a grid of curves (a benchmark that
 * prints figures; nothing here is asserted). Run: make bench-accuracy.
 * Results are recorded in docs/validation-detection.md. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_sort.h>
#include <gsl/gsl_statistics_double.h>

#include "frostfit/detect.h"
#include "frostfit/simulate.h"
#include "frostfit/solvent.h"

/* Curves per grid point, each with its own seed (noise and dropouts). */
#define N_SEEDS 3

/* Errors collected for one band: per method, |Tf - truth| in K. */
struct band {
  const char *name;
  size_t n_curves;
  size_t n[FF_METHOD_COUNT], fail[FF_METHOD_COUNT], cap[FF_METHOD_COUNT];
  double *err[FF_METHOD_COUNT];
  size_t untrusted;            /* auto: no trusted event */
  size_t missed;               /* no event found at all */
  size_t within_2u;            /* auto: |Tf - truth| <= 2 u */
};

static void add(struct band *b, int m, double e)
{
  if (b->n[m] == b->cap[m]) {
    b->cap[m] = b->cap[m] ? 2 * b->cap[m] : 256;
    b->err[m] = realloc(b->err[m], b->cap[m] * sizeof *b->err[m]);
    if (b->err[m] == NULL) {
      fprintf(stderr, "accuracy: out of memory\n");
      exit(4);
    }
  }
  b->err[m][b->n[m]++] = e;
}

static void band_release(struct band *b)
{
  for (int m = 0; m < FF_METHOD_COUNT; m++)
    free(b->err[m]);
}

static void report(struct band *b)
{
  printf("\n%s: %zu curves, %zu with no event found, %zu with no trusted "
         "auto result\n", b->name, b->n_curves, b->missed, b->untrusted);
  if (b->n[FF_METHOD_AUTO] > 0)
    printf("  auto within 2 u (its expanded uncertainty, k = 2): %.1f %%\n",
           100.0 * (double)b->within_2u / (double)b->n[FF_METHOD_AUTO]);
  printf("  %-12s %6s %10s %10s %10s %8s\n", "method", "n", "median_mK",
         "p95_mK", "max_mK", "failed");
  for (int m = 0; m < FF_METHOD_COUNT; m++) {
    if (b->n[m] == 0) {
      printf("  %-12s %6zu %10s %10s %10s %8zu\n", ff_method_name(m),
             (size_t)0, "-", "-", "-", b->fail[m]);
      continue;
    }
    gsl_sort(b->err[m], 1, b->n[m]);
    printf("  %-12s %6zu %10.3f %10.3f %10.3f %8zu\n", ff_method_name(m),
           b->n[m], 1e3 * gsl_stats_median_from_sorted_data(b->err[m], 1,
                                                             b->n[m]),
           1e3 * gsl_stats_quantile_from_sorted_data(b->err[m], 1, b->n[m],
                                                     0.95),
           1e3 * b->err[m][b->n[m] - 1], b->fail[m]);
  }
}

/* Simulates sp and detects its events, as the CLI does (dropouts left
 * out); with_resolution hands the simulated reading step to the detector. */
static void simulate_detect(const struct ff_sim_params *sp,
                            int with_resolution, struct ff_sim_result *r,
                            struct ff_event_list *l)
{
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_detect_params p = FF_DETECT_PARAMS_DEFAULT;
  double *t, *y;
  size_t m = 0;

  if (ff_simulate_run(sp, r, &d) != FF_OK) {
    fprintf(stderr, "accuracy: simulate: %s\n", d.msg);
    exit(3);
  }
  t = malloc(r->n * sizeof *t);
  y = malloc(r->n * sizeof *y);
  if (t == NULL || y == NULL)
    exit(4);
  for (size_t i = 0; i < r->n; i++)
    if (isfinite(r->temp_c[i])) {
      t[m] = r->t_s[i];
      y[m++] = r->temp_c[i];
    }
  p.solvent = &sp->solvent;
  if (with_resolution)
    p.resolution_k = sp->resolution_k;
  ff_detect_run(t, y, m, &p, l, &d);
  free(t);
  free(y);
}

/* One event against the truth, into band b. */
static void score(struct band *b, const struct ff_event *e, double truth)
{
  if (e->trusted && isfinite(e->freezing_point_c)) {
    add(b, FF_METHOD_AUTO, fabs(e->freezing_point_c - truth));
    if (fabs(e->freezing_point_c - truth) <= 2.0 * e->u_freezing_point_k)
      b->within_2u++;
  } else {
    b->untrusted++;
    b->fail[FF_METHOD_AUTO]++;
  }
  for (int q = 1; q < FF_METHOD_COUNT; q++) {
    if (e->est[q].ok)
      add(b, q, fabs(e->est[q].value_c - truth));
    else
      b->fail[q]++;
  }
}

/* One curve into the bands it belongs to. */
static void run_curve(const struct ff_sim_params *sp, struct band **bands,
                      size_t nb)
{
  struct ff_sim_result r = FF_SIM_RESULT_INIT;
  struct ff_event_list l = FF_EVENT_LIST_INIT;

  simulate_detect(sp, 1, &r, &l);
  for (size_t k = 0; k < nb; k++) {
    struct band *b = bands[k];
    b->n_curves++;
    if (l.n == 0) {
      b->missed++;
      for (int q = 0; q < FF_METHOD_COUNT; q++)
        b->fail[q]++;
      continue;
    }
    /* One freeze per curve: the first event. */
    const struct ff_event *e = &l.v[0];
    if (k == 0 && getenv("FF_BENCH_VERBOSE") != NULL)
      printf("curve %s b=%.2f i=%.0f sc=%.1f lag=%.0f noise=%.1fmK "
             "res=%.0fmK: %s %s err %+.2f mK, model %+.2f mK, flags %x\n",
             sp->solvent.name, sp->molality_mol_kg, sp->vant_hoff_i,
             sp->supercool_k, sp->probe_lag_s, 1e3 * sp->noise_k,
             1e3 * sp->resolution_k, ff_method_name(e->method),
             e->trusted ? "trusted" : "untrusted",
             1e3 * (e->freezing_point_c - r.true_fp_c),
             1e3 * (e->est[FF_METHOD_MODEL].value_c - r.true_fp_c), e->flags);
    score(b, e, r.true_fp_c);
  }
  ff_event_list_release(&l);
  ff_sim_result_release(&r);
}

/* Several freeze-thaw cycles per file: every event against the truth, and
 * how many of the simulated freezes were found. */
static void run_cycles(const struct ff_sim_params *sp, struct band *b,
                       size_t *found, size_t *simulated)
{
  struct ff_sim_result r = FF_SIM_RESULT_INIT;
  struct ff_event_list l = FF_EVENT_LIST_INIT;

  simulate_detect(sp, 0, &r, &l);
  *simulated += r.n_cycles;
  *found += l.n;
  for (size_t k = 0; k < l.n; k++) {
    b->n_curves++;
    score(b, &l.v[k], r.true_fp_c);
  }
  ff_event_list_release(&l);
  ff_sim_result_release(&r);
}

int main(void)
{
  static const double noise_mk[] = { 0.5, 2.0, 5.0, 10.0 };
  static const double sc_k[] = { 0.2, 0.8, 1.5, 2.5 };
  static const double lag_s[] = { 0.0, 2.0, 5.0 };
  static const double res_mk[] = { 1.0, 10.0 };
  static const double water_b[] = { 0.0, 0.1, 0.3, 1.0 };
  static const double cyhex_b[] = { 0.0, 0.03, 0.1 };
  struct ff_solvent_table tab = FF_SOLVENT_TABLE_INIT;
  struct ff_diag d = FF_DIAG_INIT;
  const struct ff_solvent *water, *cyhex;
  struct band all = { .name = "all curves" },
              target = { .name = "TARGET: noise <= 5 mK (water and "
                                 "cyclohexane, all supercooling, lag, "
                                 "resolution)" },
              tw = { .name = "noise <= 5 mK, water" },
              tc = { .name = "noise <= 5 mK, cyclohexane" },
              noisy = { .name = "noise 10 mK" },
              coarse = { .name = "resolution 10 mK, noise <= 5 mK" },
              hard = { .name = "hard: supercooling 2.5 K, lag 5 s, highest "
                               "molality, noise <= 5 mK" },
              case3 = { .name = "SPECIFIC: water 0.3 mol/kg (i = 1 and 2), "
                                "supercooling 1.5 K, noise 0.5-5 mK, lag "
                                "0-5 s" };
  struct band cycles = { .name = "CYCLES: 4 freeze-thaw cycles per file, "
                                 "random supercooling 0.3-2.5 K, bath 4.5 K below Tf, water 0 "
                                 "and 0.3 mol/kg (i = 2), cyclohexane 0 and "
                                 "0.05 mol/kg, noise 2 mK, lag 2 s; every "
                                 "event" };
  size_t cyc_found = 0, cyc_sim = 0;
  unsigned long seed = 1000;
  clock_t c0 = clock();

  gsl_set_error_handler_off();
  if (ff_solvent_table_load(&tab, "datasets/solvents.csv", &d) != FF_OK) {
    fprintf(stderr, "accuracy: %s (run from the source tree)\n", d.msg);
    return 4;
  }
  water = ff_solvent_find(&tab, "water");
  cyhex = ff_solvent_find(&tab, "cyclohexane");
  if (water == NULL || cyhex == NULL) {
    fprintf(stderr, "accuracy: water or cyclohexane missing from the "
            "solvent table\n");
    return 4;
  }
  printf("frostfit detection accuracy: |Tf - true| against the simulator "
         "(offset 0), first event of each curve\n");
  for (int sv = 0; sv < 2; sv++) {
    const struct ff_solvent *s = sv ? cyhex : water;
    const double *bs = sv ? cyhex_b : water_b;
    size_t nbm = sv ? 3 : 4;
    for (size_t ib = 0; ib < nbm; ib++)
      for (size_t in = 0; in < 4; in++)
        for (size_t is = 0; is < 4; is++)
          for (size_t il = 0; il < 3; il++)
            for (size_t ir = 0; ir < 2; ir++)
              for (int rep = 0; rep < N_SEEDS; rep++) {
              struct ff_sim_params sp;
              struct band *bl[8];
              size_t nb = 0;
              double tf;
              ff_sim_params_default(&sp);
              sp.solvent = *s;
              sp.molality_mol_kg = bs[ib];
              sp.vant_hoff_i = (!sv && (ib & 1)) ? 2.0 : 1.0;
              sp.supercool_k = sc_k[is];
              sp.probe_lag_s = lag_s[il];
              sp.noise_k = 1e-3 * noise_mk[in];
              sp.resolution_k = 1e-3 * res_mk[ir];
              sp.offset_k = 0.0;
              sp.seed = ++seed;
              tf = ff_sim_true_fp_c(&sp);
              sp.start_c = tf + 5.0;
              sp.bath_c = tf - sc_k[is] - 4.0;
              sp.freeze_s = 600.0;
              bl[nb++] = &all;
              if (in < 3) {
                bl[nb++] = &target;
                bl[nb++] = sv ? &tc : &tw;
                if (ir == 1)
                  bl[nb++] = &coarse;
                if (is == 3 && il == 2 && ib == nbm - 1)
                  bl[nb++] = &hard;
              } else {
                bl[nb++] = &noisy;
              }
              run_curve(&sp, bl, nb);
            }
  }
  /* The comparison case: 0.3 mol/kg in water, 1.5 K supercooling. */
  for (int i = 1; i <= 2; i++)
    for (size_t in = 0; in < 3; in++)
      for (size_t il = 0; il < 3; il++)
        for (int rep = 0; rep < 4; rep++) {
          struct ff_sim_params sp;
          struct band *bl[1] = { &case3 };
          double tf;
          ff_sim_params_default(&sp);
          sp.solvent = *water;
          sp.molality_mol_kg = 0.3;
          sp.vant_hoff_i = i;
          sp.supercool_k = 1.5;
          sp.probe_lag_s = lag_s[il];
          sp.noise_k = 1e-3 * noise_mk[in];
          sp.resolution_k = 1e-3;
          sp.seed = ++seed;
          tf = ff_sim_true_fp_c(&sp);
          sp.start_c = tf + 5.0;
          sp.bath_c = tf - 1.5 - 4.0;
          sp.freeze_s = 600.0;
          run_curve(&sp, bl, 1);
        }
  /* Multi-cycle files: random supercooling 0.3-2.5 K per cycle. */
  {
    const struct { const struct ff_solvent *s; double b, i; } mc[] = {
      { water, 0.0, 1.0 }, { water, 0.3, 2.0 }, { cyhex, 0.0, 1.0 },
      { cyhex, 0.05, 1.0 },
    };
    for (size_t q = 0; q < sizeof mc / sizeof mc[0]; q++)
      for (int rep = 0; rep < 5; rep++) {
        struct ff_sim_params sp;
        double tf;
        ff_sim_params_default(&sp);
        sp.solvent = *mc[q].s;
        sp.molality_mol_kg = mc[q].b;
        sp.vant_hoff_i = mc[q].i;
        sp.supercool_k = -1.0;
        sp.cycles = 4;
        /* Followed 300 s, bath 4.5 K below: cyclohexane is then about two
         * thirds frozen (a fully frozen sample does not thaw in the
         * simulator, reported to its owner). */
        sp.freeze_s = 300.0;
        sp.noise_k = 0.002;
        sp.probe_lag_s = 2.0;
        sp.seed = ++seed;
        tf = ff_sim_true_fp_c(&sp);
        sp.start_c = tf + 5.0;
        sp.bath_c = tf - 4.5;
        run_cycles(&sp, &cycles, &cyc_found, &cyc_sim);
      }
  }
  report(&target);
  report(&tw);
  report(&tc);
  report(&hard);
  report(&coarse);
  report(&noisy);
  report(&all);
  report(&case3);
  report(&cycles);
  printf("  freezes simulated %zu, events found %zu\n", cyc_sim, cyc_found);
  printf("\nCPU time %.1f s\n", (double)(clock() - c0) / CLOCKS_PER_SEC);
  {
    struct band *all_bands[] = { &target, &tw, &tc, &hard, &coarse, &noisy,
                                 &all, &case3, &cycles };
    for (size_t k = 0; k < sizeof all_bands / sizeof all_bands[0]; k++)
      band_release(all_bands[k]);
  }
  ff_solvent_table_release(&tab);
  return 0;
}
