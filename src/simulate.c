/* simulate.c - physical cooling-curve model (stirred tube in a bath, with its
 * thermometer): the ground truth the detector and the series are tested on.
 * Every equation is written out in docs/methods/simulator.md. */
#include "frostfit/simulate.h"

#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_odeiv2.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>
#include <gsl/gsl_roots.h>

/* Random supercooling range, K (common practice, no source: 0.3-1 K in
 * Beckmann work; milk cryoscopes supercool about 2.5 K, GB 5413.38-2016). */
#define SUPERCOOL_RAND_LO 0.3
#define SUPERCOOL_RAND_HI 2.5
/* Growth and melting scale with the ice present, x / (x + ICE_SOFT_X), so
 * melting fades as the last ice goes; nucleation therefore starts from a
 * seed crystal of ICE_SEED_X. One smooth law for both signs keeps the
 * (very stiff) freezing branch free of kinks for the integrator. Below
 * ICE_GONE_X the sample counts as ice-free. */
#define ICE_SOFT_X 1e-7
#define ICE_SEED_X 1e-7
#define ICE_GONE_X 1e-10
/* Most samples in one record (guards against absurd parameter sets). */
#define MAX_SAMPLES 20000000UL
/* After nucleation the peak is searched on this finer grid for this long
 * (recalescence takes well under a second at the default growth rate). */
#define PEAK_STEP_S 0.01
#define PEAK_WINDOW_S 5.0
/* Integrator tolerances: the curve agrees with a 1e-12 run to a few uK,
 * far below any thermometer's resolution. */
#define ODE_EPS_ABS 1e-9
#define ODE_EPS_REL 1e-9

void ff_sim_water(struct ff_solvent *s)
{
  memset(s, 0, sizeof *s);
  snprintf(s->name, sizeof s->name, "water");
  snprintf(s->aliases, sizeof s->aliases, "h2o|ice");
  s->tf_c = 0.0;               /* ice point */
  s->kf_k_kg_mol = 1.860;      /* USP <785> */
  s->dh_fus_j_mol = 6006.77;   /* IAPWS-95/06 via python3-iapws, computed
                                  at the normal melting point 273.1525 K */
  s->m_g_mol = 18.015268;      /* IAPWS value */
  s->cp_liq_j_g_k = 4.2194;    /* IAPWS-95 at 273.15 K, computed */
  s->cp_sol_j_g_k = 2.0967;    /* IAPWS-06 at 273.15 K, computed */
  snprintf(s->hazard, sizeof s->hazard, "No chemical hazard. Cold baths "
           "(ice-salt, dry ice) still cause frostbite.");
  snprintf(s->source, sizeof s->source, "built-in copy of the water row of "
           "datasets/solvents.csv (Kf: USP <785>; dH_fus, cp: IAPWS-95/06 "
           "via python3-iapws, computed at 273.15 K)");
}

void ff_sim_params_default(struct ff_sim_params *p)
{
  memset(p, 0, sizeof *p);
  ff_sim_water(&p->solvent);
  p->solvent_g = 20.0;
  p->molality_mol_kg = 0.0;
  p->vant_hoff_i = 1.0;
  p->start_c = 5.0;
  p->bath_c = -6.0;
  p->tau_s = 120.0;
  p->stir_w = 0.0;
  p->supercool_k = 1.5;
  p->growth_rate = 0.05;
  p->probe_lag_s = 2.0;
  p->noise_k = 0.002;
  p->resolution_k = 0.001;
  p->offset_k = 0.0;
  p->dt_s = 1.0;
  p->dropout = 0.0;
  p->freeze_s = 900.0;
  p->cycles = 1;
  p->seed = 1;
  p->growth_area_frac = 0.0005;
  p->thaw_k = 3.0;
  p->bath_drift_k_s = 0.0;
  p->bath_channel = 0;
  p->latent_dcp = 0;
}

void ff_sim_params_solvent(struct ff_sim_params *p, const struct ff_solvent *s)
{
  p->solvent = *s;
  p->start_c = s->tf_c + 5.0;
  p->bath_c = s->tf_c - 6.0;
}

double ff_sim_true_fp_c(const struct ff_sim_params *p)
{
  return p->solvent.tf_c
         - p->vant_hoff_i * p->solvent.kf_k_kg_mol * p->molality_mol_kg;
}

void ff_sim_result_release(struct ff_sim_result *r)
{
  if (r == NULL)
    return;
  free(r->t_s);
  free(r->temp_c);
  free(r->sample_c);
  free(r->ice_frac);
  free(r->bath_temp_c);
  memset(r, 0, sizeof *r);
}

/* ------------------------------------------------------------------ */
/* The model.  State y = { T (sample, C), x (frozen fraction), Tp (probe) }. */

struct model {
  double ms;        /* solvent mass, g */
  double cpl, cps;  /* J/(g K) */
  double lat;       /* latent heat L = dH_fus / M at Tf0, J/g */
  double dcp;       /* cp_l - cp_s when L varies with T, else 0 */
  double h;         /* heat-transfer coefficient m_s cp_l / tau, W/K */
  double stir;      /* W */
  double tf0;       /* pure-solvent freezing point, C */
  double dep;       /* i Kf b0, K: depression of the initial solution */
  double g;         /* growth constant, 1/(K s) */
  double xa;        /* area fraction scale, 0 = off */
  double lag;       /* probe time constant, s; 0 = ideal probe */
  double bath;      /* bath temperature when switched on, C */
  double drift;     /* K/s since t_bath */
  double t_bath;    /* when the current bath was switched on, s */
  int growth;       /* 1 once a crystal exists in this cycle */
};

/* Freezing point of the liquid left when a fraction x of the solvent is ice:
 * the solute stays in (1 - x) of the solvent, T_eq = Tf0 - dep / (1 - x). */
static double t_eq(const struct model *m, double x)
{
  double xl = 1.0 - x;

  if (xl < 1e-6)
    xl = 1e-6;
  return m->tf0 - m->dep / xl;
}

/* dx/dt: ice grows (or melts) in proportion to the departure from the local
 * freezing point, dx/dt = G (T_eq - T) (1 + x/x_a) (1 - x) x/(x + x_s):
 * the ice surface grows with the ice (1 + x/x_a), freezing needs liquid
 * (1 - x), and the rate fades as the last ice goes (x/(x + x_s)). */
static double ice_rate(const struct model *m, double T, double x)
{
  double area;

  if (!m->growth || x <= 0.0 || x >= 1.0)
    return 0.0;
  area = m->xa > 0.0 ? 1.0 + x / m->xa : 1.0;
  return m->g * (t_eq(m, x) - T) * area * (1.0 - x) * x / (x + ICE_SOFT_X);
}

static double bath_at(const struct model *m, double t)
{
  return m->bath + m->drift * (t - m->t_bath);
}

static int rhs(double t, const double y[], double f[], void *params)
{
  const struct model *m = params;
  double T = y[0], x = y[1], xc = x < 0.0 ? 0.0 : (x > 1.0 ? 1.0 : x);
  double rate = ice_rate(m, T, x);
  double c = m->ms * ((1.0 - xc) * m->cpl + xc * m->cps);
  double lat = m->lat + m->dcp * (T - m->tf0);

  /* Energy: C dT/dt = -h (T - T_bath) + P_stir + L(T) m_s dx/dt, with
   * L(T) = L + (cp_l - cp_s)(T - Tf0) (Kirchhoff) or constant L. */
  f[0] = (-m->h * (T - bath_at(m, t)) + m->stir + lat * m->ms * rate) / c;
  f[1] = rate;
  /* Probe: dTp/dt = (T - Tp) / lag; an ideal probe follows T exactly. */
  f[2] = m->lag > 0.0 ? (T - y[2]) / m->lag : f[0];
  return GSL_SUCCESS;
}

/* Forward-difference Jacobian: simpler to keep right than an analytic one
 * through every factor of the growth law, and cheap for three states. */
static int jac(double t, const double y[], double *dfdy, double dfdt[],
               void *params)
{
  double f0[3], f1[3], yy[3];

  rhs(t, y, f0, params);
  for (int j = 0; j < 3; j++) {
    double hj = j == 1 ? 1e-10 + 1e-7 * fabs(y[1])
                       : 1e-7 * (1.0 + fabs(y[j]));
    memcpy(yy, y, sizeof yy);
    yy[j] += hj;
    rhs(t, yy, f1, params);
    for (int i = 0; i < 3; i++)
      dfdy[i * 3 + j] = (f1[i] - f0[i]) / hj;
  }
  {
    double f2[3];
    rhs(t + 1e-3, y, f2, params);      /* only the bath drift depends on t */
    for (int i = 0; i < 3; i++)
      dfdt[i] = (f2[i] - f0[i]) / 1e-3;
  }
  return GSL_SUCCESS;
}

/* ------------------------------------------------------------------ */
/* The run: integrate between events, record at the sampling grid. */

struct sim {
  const struct ff_sim_params *p;
  struct model m;
  gsl_odeiv2_system sys;
  gsl_odeiv2_driver *drv;
  gsl_rng *rng_phys;     /* draws the random supercooling */
  gsl_rng *rng_meas;     /* draws noise and dropouts */
  gsl_rng *rng_bath;     /* the same for the bath probe */
  double t, y[3];
  unsigned long k_next;  /* index of the next sample */
  double fine_until;     /* follow the peak on a fine grid until then */
  double peak;           /* highest sample temperature seen there */
  struct ff_sim_result *r;
  size_t cap;
  struct ff_diag *d;
};

static int grow(struct sim *s)
{
  size_t cap = s->cap ? 2 * s->cap : 4096;
  double **arr[5] = { &s->r->t_s, &s->r->temp_c, &s->r->sample_c,
                      &s->r->ice_frac, &s->r->bath_temp_c };
  int n_arr = s->p->bath_channel ? 5 : 4;

  if (s->r->n >= MAX_SAMPLES)
    return ff_diag_set(s->d, FF_EUSAGE, NULL, "the simulated record would "
                       "exceed %lu samples: raise dt or shorten the run",
                       MAX_SAMPLES);
  for (int i = 0; i < n_arr; i++) {
    double *v = realloc(*arr[i], cap * sizeof **arr[i]);
    if (v == NULL)
      return ff_diag_set(s->d, FF_EIO, NULL, "out of memory");
    *arr[i] = v;
  }
  s->cap = cap;
  return FF_OK;
}

/* What a thermometer reports for temperature x: noise, steps, dropouts. */
static double reading(const struct ff_sim_params *p, gsl_rng *rng, double x)
{
  double v = x + gsl_ran_gaussian(rng, 1.0) * p->noise_k;
  double u = gsl_rng_uniform(rng);

  if (p->resolution_k > 0.0)
    v = round(v / p->resolution_k) * p->resolution_k + 0.0;  /* no -0 */
  return u < p->dropout ? NAN : v;
}

static int record(struct sim *s)
{
  struct ff_sim_result *r = s->r;

  if (r->n == s->cap && grow(s) != FF_OK)
    return (int)s->d->status;
  r->t_s[r->n] = s->t;
  r->sample_c[r->n] = s->y[0];
  r->ice_frac[r->n] = s->y[1] < 0.0 ? 0.0 : s->y[1];
  r->temp_c[r->n] = reading(s->p, s->rng_meas, s->y[2] + s->p->offset_k);
  if (s->p->bath_channel)
    r->bath_temp_c[r->n] = reading(s->p, s->rng_bath, bath_at(&s->m, s->t));
  r->n++;
  return FF_OK;
}

static int step_to(struct sim *s, double t1)
{
  double t0 = s->t, y0[3];
  int st;

  /* An interval of rounding size (a fine step ending next to a sample
   * time) is no interval: the stepper would fail on it. */
  if (t1 - s->t <= 1e-9 * (1.0 + fabs(t1))) {
    if (t1 > s->t)
      s->t = t1;
    return FF_OK;
  }
  memcpy(y0, s->y, sizeof y0);
  st = gsl_odeiv2_driver_apply(s->drv, &s->t, t1, s->y);
  if (st != GSL_SUCCESS) {
    /* Once more from the same point with a fresh, small first step. */
    s->t = t0;
    memcpy(s->y, y0, sizeof y0);
    gsl_odeiv2_driver_reset_hstart(s->drv, 1e-6);
    st = gsl_odeiv2_driver_apply(s->drv, &s->t, t1, s->y);
  }
  if (st != GSL_SUCCESS)
    return ff_diag_set(s->d, FF_EUNTRUSTED, NULL, "the integrator failed at "
                       "t = %.3f s: %s", s->t, gsl_strerror(st));
  s->t = t1;
  return FF_OK;
}

static double next_sample_t(const struct sim *s)
{
  return (double)s->k_next * s->p->dt_s;
}

/* step_to, but through the peak window in small steps, so the peak after
 * recalescence is known between samples too. */
static int advance(struct sim *s, double t1)
{
  int st;

  while (s->t < s->fine_until && s->t < t1) {
    double tn = fmin(fmin(s->t + PEAK_STEP_S, s->fine_until), t1);
    if (t1 - tn < 0.5 * PEAK_STEP_S)
      tn = t1;                   /* no sliver before the sample */
    if ((st = step_to(s, tn)) != FF_OK)
      return st;
    if (s->y[0] > s->peak)
      s->peak = s->y[0];
  }
  return step_to(s, t1);
}

/* Integrates to t_end, recording every sample time on the way (t_end itself
 * included when it falls on the grid). */
static int run_until(struct sim *s, double t_end)
{
  int st;

  while (next_sample_t(s) <= t_end) {
    if ((st = advance(s, next_sample_t(s))) != FF_OK ||
        (st = record(s)) != FF_OK)
      return st;
    s->k_next++;
  }
  return advance(s, t_end);
}

/* The physics changed (bath switched, crystal appeared, ice gone): a
 * multistep method must not carry its history across that. */
static void event(struct sim *s)
{
  gsl_odeiv2_driver_reset(s->drv);
}

/* Liquid branch in closed form, s seconds after the cold bath went on with
 * the sample at y0: for a bath T_b0 + d s the solution of
 * tau dT/ds = -(T - T_b0 - d s - P/h) is T_p(s) + (y0 - T_p(0)) e^(-s/tau)
 * with T_p(s) = T_b0 + P/h + d (s - tau). */
struct liquid { double y0, tb0, ph, d, tau, target; };

static double liquid_t(double sec, const struct liquid *q)
{
  double tp0 = q->tb0 + q->ph - q->d * q->tau;
  return tp0 + q->d * sec + (q->y0 - tp0) * exp(-sec / q->tau);
}

static double liquid_gap(double sec, void *params)
{
  const struct liquid *q = params;
  return liquid_t(sec, q) - q->target;
}

/* Seconds until the liquid reaches the nucleation temperature; returns 0 if
 * it never does (bath too warm, or drifting up faster than it cools). */
static int nucleation_delay(const struct liquid *q, double *out)
{
  double lo = 0.0, hi = 0.0, step = q->tau / 8.0;
  gsl_function fn = { liquid_gap, (void *)q };
  gsl_root_fsolver *rs;
  int st = GSL_CONTINUE;

  if (fabs(q->d) <= 0.0) {
    /* No drift: t_n = tau ln((T0 - T_inf) / (T_n - T_inf)). */
    double t_inf = q->tb0 + q->ph;
    if (!(t_inf < q->target && q->y0 > q->target))
      return 0;
    *out = q->tau * log((q->y0 - t_inf) / (q->target - t_inf));
    return 1;
  }
  if (liquid_gap(0.0, fn.params) <= 0.0)
    return 0;
  for (hi = step; liquid_gap(hi, fn.params) > 0.0; hi += step) {
    lo = hi;
    if (hi > 60.0 * q->tau)
      return 0;
  }
  rs = gsl_root_fsolver_alloc(gsl_root_fsolver_brent);
  if (rs == NULL || gsl_root_fsolver_set(rs, &fn, lo, hi) != GSL_SUCCESS) {
    gsl_root_fsolver_free(rs);
    return 0;
  }
  for (int it = 0; it < 200 && st == GSL_CONTINUE; it++) {
    gsl_root_fsolver_iterate(rs);
    lo = gsl_root_fsolver_x_lower(rs);
    hi = gsl_root_fsolver_x_upper(rs);
    st = gsl_root_test_interval(lo, hi, 1e-12, 1e-14);
  }
  *out = gsl_root_fsolver_root(rs);
  gsl_root_fsolver_free(rs);
  return st == GSL_SUCCESS;
}

/* Cold bath on: liquid cools by Newton's law until it nucleates. Before
 * nucleation there is no ice, so the liquid branch is known in closed form
 * and so is the nucleation instant. */
static int cool_and_freeze(struct sim *s, unsigned c)
{
  const struct ff_sim_params *p = s->p;
  struct ff_sim_result *r = s->r;
  double tf_true = r->true_fp_c, u = p->supercool_k, t_n, delay;
  struct liquid q;
  int st;

  if (u < 0.0)
    u = SUPERCOOL_RAND_LO + (SUPERCOOL_RAND_HI - SUPERCOOL_RAND_LO)
        * gsl_rng_uniform(s->rng_phys);
  s->m.bath = p->bath_c;
  s->m.drift = p->bath_drift_k_s;
  s->m.t_bath = s->t;
  s->m.growth = 0;
  event(s);
  r->cycle_start_t_s[c] = s->t;
  q = (struct liquid){ s->y[0], p->bath_c, s->m.stir / s->m.h,
                       p->bath_drift_k_s, p->tau_s, tf_true - u };
  if (nucleation_delay(&q, &delay)) {
    t_n = s->t + delay;
    if ((st = run_until(s, t_n)) != FF_OK)
      return st;
    /* The closed form is exact; the integrated state agrees to ~1e-6 K,
     * so snap it, and the reported supercooling is the one asked for. The
     * seed crystal's latent heat warms the sample by L x_seed / cp. */
    s->y[0] = tf_true - u + (s->m.lat + s->m.dcp * (tf_true - u - s->m.tf0))
                            * ICE_SEED_X / s->m.cpl;
    s->y[1] = ICE_SEED_X;
    if (!(p->probe_lag_s > 0.0))
      s->y[2] = s->y[0];          /* an ideal probe is the sample */
    r->nucleation_t_s[c] = t_n;
    r->supercool_k[c] = u;
    s->m.growth = 1;
    event(s);
    s->peak = s->y[0];
    s->fine_until = t_n + PEAK_WINDOW_S;
  } else {
    /* The bath cannot take the liquid that far down: no freeze this cycle,
     * the curve just settles towards the bath. */
    t_n = s->t + 6.0 * p->tau_s;
    r->nucleation_t_s[c] = NAN;
    r->supercool_k[c] = NAN;
    r->peak_c[c] = NAN;
  }
  {
    size_t i0 = r->n;
    if ((st = run_until(s, t_n + p->freeze_s)) != FF_OK)
      return st;
    if (s->m.growth) {
      r->peak_c[c] = s->peak;
      for (size_t i = i0; i < r->n; i++)
        if (r->sample_c[i] > r->peak_c[c])
          r->peak_c[c] = r->sample_c[i];
    }
  }
  r->freeze_end_t_s[c] = s->t;
  r->n_cycles = c + 1;
  return FF_OK;
}

/* Liquid fraction that starts the thaw of a sample frozen through. */
#define THAW_SEED_X 1e-3

/* Warm bath on until the ice is gone and the sample is back at start_c;
 * checked at the sampling grid, so the next cycle starts on a sample. */
static int thaw(struct sim *s)
{
  const struct ff_sim_params *p = s->p;
  double t_max = s->t + 400.0 * p->tau_s;
  int st;

  s->m.bath = p->start_c + p->thaw_k;
  s->m.drift = 0.0;
  s->m.t_bath = s->t;
  event(s);
  for (;;) {
    if ((st = run_until(s, next_sample_t(s))) != FF_OK)
      return st;
    /* The growth law needs liquid ((1 - x) factor), so a sample frozen
     * through would never start to melt. Once it is warmer than its
     * freezing point, melting starts from a film at the warm wall, seeded
     * as THAW_SEED_X of liquid: a state reset between steps, like the
     * nucleation seed, not a kink in the equations. */
    if (s->m.growth && s->y[1] > 1.0 - THAW_SEED_X
        && s->y[0] > t_eq(&s->m, 1.0 - THAW_SEED_X)) {
      s->y[1] = 1.0 - THAW_SEED_X;
      event(s);
    }
    if (s->y[1] < ICE_GONE_X && s->m.growth) {
      s->y[1] = 0.0;
      s->m.growth = 0;
      event(s);
    }
    if (!s->m.growth && s->y[0] >= p->start_c)
      return FF_OK;
    if (s->t > t_max)
      return ff_diag_set(s->d, FF_EUNTRUSTED, NULL, "the sample did not "
                         "thaw within %.0f s", 400.0 * p->tau_s);
  }
}

static int check_params(const struct ff_sim_params *p, struct ff_diag *d)
{
  const struct ff_solvent *v = &p->solvent;
  double tf_true = ff_sim_true_fp_c(p);
  const struct { const char *name; double x; int ok; } c[] = {
    { "solvent molar mass", v->m_g_mol, v->m_g_mol > 0.0 },
    { "solvent enthalpy of fusion", v->dh_fus_j_mol, v->dh_fus_j_mol > 0.0 },
    { "solvent Kf", v->kf_k_kg_mol, v->kf_k_kg_mol >= 0.0 },
    { "solvent liquid heat capacity", v->cp_liq_j_g_k, v->cp_liq_j_g_k > 0.0 },
    { "solvent solid heat capacity", v->cp_sol_j_g_k, v->cp_sol_j_g_k > 0.0 },
    { "solvent freezing point", v->tf_c, v->tf_c > -273.15 },
    { "solvent mass", p->solvent_g, p->solvent_g > 0.0 },
    { "molality", p->molality_mol_kg, p->molality_mol_kg >= 0.0 },
    { "van 't Hoff factor", p->vant_hoff_i, p->vant_hoff_i > 0.0 },
    { "start temperature", p->start_c, p->start_c > tf_true },
    { "bath temperature", p->bath_c, p->bath_c > -273.15 },
    { "time constant", p->tau_s, p->tau_s > 0.0 },
    { "stirring power", p->stir_w, p->stir_w >= 0.0 },
    { "supercooling", p->supercool_k, p->supercool_k < 50.0 },
    /* Above 1e4 /(K s) the freezing branch is too stiff to follow (and the
     * kinetic undercooling already far below a microkelvin). */
    { "growth rate", p->growth_rate,
      p->growth_rate > 0.0 && p->growth_rate <= 1e4 },
    { "growth area fraction", p->growth_area_frac, p->growth_area_frac >= 0.0 },
    { "probe lag", p->probe_lag_s, p->probe_lag_s >= 0.0 },
    { "noise", p->noise_k, p->noise_k >= 0.0 },
    { "resolution", p->resolution_k, p->resolution_k >= 0.0 },
    { "offset", p->offset_k, 1 },
    { "sampling interval", p->dt_s, p->dt_s > 0.0 },
    { "dropout fraction", p->dropout, p->dropout >= 0.0 && p->dropout < 1.0 },
    { "freeze duration", p->freeze_s, p->freeze_s > 0.0 },
    { "thaw bath step", p->thaw_k, p->thaw_k > 0.0 },
    { "bath drift", p->bath_drift_k_s, fabs(p->bath_drift_k_s) < 1.0 },
  };

  for (size_t i = 0; i < sizeof c / sizeof c[0]; i++) {
    if (!isfinite(c[i].x))
      return ff_diag_set(d, FF_EUSAGE, NULL, "%s must be a finite number",
                         c[i].name);
    if (!c[i].ok) {
      if (strcmp(c[i].name, "start temperature") == 0)
        return ff_diag_set(d, FF_EUSAGE, NULL, "start temperature %g C must "
                           "lie above the freezing point %g C", p->start_c,
                           tf_true);
      return ff_diag_set(d, FF_EUSAGE, NULL, "%s out of range: %g",
                         c[i].name, c[i].x);
    }
  }
  if (p->cycles < 1 || p->cycles > FF_SIM_MAX_CYCLES)
    return ff_diag_set(d, FF_EUSAGE, NULL, "cycles must be 1 to %d, not %u",
                       FF_SIM_MAX_CYCLES, p->cycles);
  if ((p->freeze_s + 6.0 * p->tau_s) / p->dt_s * p->cycles
      > (double)MAX_SAMPLES)
    return ff_diag_set(d, FF_EUSAGE, NULL, "the simulated record would exceed "
                       "%lu samples: raise dt or shorten the run", MAX_SAMPLES);
  return FF_OK;
}

int ff_simulate_run(const struct ff_sim_params *p, struct ff_sim_result *r,
                    struct ff_diag *d)
{
  struct sim s = { 0 };
  int st;

  memset(r, 0, sizeof *r);
  if ((st = check_params(p, d)) != FF_OK)
    return st;
  s.p = p;
  s.r = r;
  s.d = d;
  s.m.ms = p->solvent_g;
  s.m.cpl = p->solvent.cp_liq_j_g_k;
  s.m.cps = p->solvent.cp_sol_j_g_k;
  s.m.lat = p->solvent.dh_fus_j_mol / p->solvent.m_g_mol;
  s.m.dcp = p->latent_dcp ? p->solvent.cp_liq_j_g_k - p->solvent.cp_sol_j_g_k
                          : 0.0;
  s.m.h = p->solvent_g * p->solvent.cp_liq_j_g_k / p->tau_s;
  s.m.stir = p->stir_w;
  s.m.tf0 = p->solvent.tf_c;
  s.m.dep = p->vant_hoff_i * p->solvent.kf_k_kg_mol * p->molality_mol_kg;
  s.m.g = p->growth_rate;
  s.m.xa = p->growth_area_frac;
  s.m.lag = p->probe_lag_s;
  r->true_fp_c = ff_sim_true_fp_c(p);
  for (size_t c = 0; c < FF_SIM_MAX_CYCLES; c++)
    r->nucleation_t_s[c] = r->supercool_k[c] = r->peak_c[c] =
      r->freeze_end_t_s[c] = r->cycle_start_t_s[c] = NAN;

  s.sys = (gsl_odeiv2_system){ rhs, jac, 3, &s.m };
  s.drv = gsl_odeiv2_driver_alloc_y_new(&s.sys, gsl_odeiv2_step_msbdf,
                                        1e-3, ODE_EPS_ABS, ODE_EPS_REL);
  s.rng_phys = gsl_rng_alloc(gsl_rng_mt19937);
  s.rng_meas = gsl_rng_alloc(gsl_rng_mt19937);
  s.rng_bath = gsl_rng_alloc(gsl_rng_mt19937);
  if (s.drv == NULL || s.rng_phys == NULL || s.rng_meas == NULL ||
      s.rng_bath == NULL) {
    st = ff_diag_set(d, FF_EIO, NULL, "out of memory");
    goto out;
  }
  gsl_odeiv2_driver_set_hmax(s.drv, p->dt_s);
  /* Two streams, so changing the noise does not change the supercooling. */
  gsl_rng_set(s.rng_phys, p->seed);
  gsl_rng_set(s.rng_meas, p->seed ^ 0x5bd1e995UL);
  gsl_rng_set(s.rng_bath, p->seed ^ 0x27d4eb2fUL);
  s.m.bath = p->bath_c;
  s.m.t_bath = 0.0;
  s.y[0] = s.y[2] = p->start_c;
  s.y[1] = 0.0;
  if ((st = record(&s)) != FF_OK)
    goto out;
  s.k_next = 1;
  for (unsigned c = 0; c < p->cycles; c++) {
    if ((st = cool_and_freeze(&s, c)) != FF_OK)
      goto out;
    if (c + 1 < p->cycles && (st = thaw(&s)) != FF_OK)
      goto out;
  }
  st = FF_OK;
out:
  if (s.drv != NULL)
    gsl_odeiv2_driver_free(s.drv);
  gsl_rng_free(s.rng_phys);
  gsl_rng_free(s.rng_meas);
  gsl_rng_free(s.rng_bath);
  if (st != FF_OK) {
    double tf = r->true_fp_c;
    ff_sim_result_release(r);
    r->true_fp_c = tf;
  }
  return st;
}

static int put_num(FILE *f, double v)
{
  if (!isfinite(v))
    return 0;
  if (fabs(v) > 0.0 && fabs(v) < 1e-4)
    return fprintf(f, "%.6f", v) < 0 ? -1 : 0;
  return fprintf(f, "%.10g", v) < 0 ? -1 : 0;
}

int ff_simulate_write_csv(const struct ff_sim_result *r, FILE *f,
                          struct ff_diag *d)
{
  if (fputs(r->bath_temp_c ? "time_s,T (C),bath (C)\n" : "time_s,T (C)\n",
            f) == EOF)
    goto fail;
  for (size_t i = 0; i < r->n; i++) {
    if (put_num(f, r->t_s[i]) != 0 || fputc(',', f) == EOF ||
        put_num(f, r->temp_c[i]) != 0)
      goto fail;
    if (r->bath_temp_c != NULL &&
        (fputc(',', f) == EOF || put_num(f, r->bath_temp_c[i]) != 0))
      goto fail;
    if (fputc('\n', f) == EOF)
      goto fail;
  }
  if (fflush(f) != 0 || ferror(f))
    goto fail;
  return FF_OK;
fail:
  return ff_diag_set(d, FF_EIO, NULL, "cannot write the simulated curve: %s",
                     strerror(errno));
}
