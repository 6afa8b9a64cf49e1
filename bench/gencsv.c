/* bench/gencsv.c - synthetic logger exports for the speed benchmarks (not test data, not committed). */

/*
 * Usage:
 *   gencsv large OUT.csv [ROWS [CYCLES]]  one file: time column + 4 probes,
 *                                          10 Hz, CYCLES freeze cycles each
 *   gencsv batch DIR [RUNS [SAMPLES]]     DIR/sheet.csv and one CSV per run
 *
 * Synthetic data for timing only: a crude stirred-tube model (exponential
 * cooling toward the bath, supercooling, recalescence, a freezing branch
 * that falls as ice concentrates the solution, the solid cooling on, then
 * warming back). Deterministic: a fixed seed gives the same bytes.
 * Self-contained on purpose (libc and libm only) so the benchmark does not
 * depend on any library stage being finished.
 */
#include <errno.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#define KF_WATER 1.86        /* K kg/mol, to give plausible depressions */
#define CP_OVER_DH (4.18 / 333.6) /* water: J/(g K) over J/g, about 1.25 %/K */

static uint64_t rng_state = 0x9e3779b97f4a7c15ULL;

static double uniform(void)
{
  /* xorshift64*: plenty for synthetic noise */
  rng_state ^= rng_state >> 12;
  rng_state ^= rng_state << 25;
  rng_state ^= rng_state >> 27;
  return (double)((rng_state * 2685821657736338717ULL) >> 11) * 0x1.0p-53;
}

static double gauss(void)
{
  double u1 = uniform(), u2 = uniform();
  if (u1 < 1e-300)
    u1 = 1e-300;
  return sqrt(-2.0 * log(u1)) * cos(6.283185307179586 * u2);
}

enum phase { WARM, COOL, FREEZE, SOLID };

/* One probe in one tube. */
struct probe {
  enum phase ph;
  double temp_c;             /* true sample temperature */
  double fp_c;               /* equilibrium freezing point of the solution */
  double bath_c, warm_c;
  double tau_cool_s, tau_warm_s, tau_solid_s;
  double supercool_k;        /* this cycle's */
  double frozen;             /* ice fraction of the water */
  double noise_k;
};

static void probe_init(struct probe *p, double fp_c, double bath_c,
                       double warm_c, double tau_cool_s)
{
  memset(p, 0, sizeof *p);
  p->ph = WARM;
  p->temp_c = warm_c;
  p->fp_c = fp_c;
  p->bath_c = bath_c;
  p->warm_c = warm_c;
  p->tau_cool_s = tau_cool_s;
  p->tau_warm_s = 600;
  p->tau_solid_s = 400;
  p->noise_k = 0.003;
}

static void probe_cool(struct probe *p)
{
  p->ph = COOL;
  p->supercool_k = 0.8 + 2.0 * uniform();
}

static void probe_warm(struct probe *p)
{
  p->ph = WARM;
}

/* Advances by dt and returns what the thermometer shows. */
static double probe_step(struct probe *p, double dt)
{
  double target, tau;

  switch (p->ph) {
  case COOL:
    target = p->bath_c;
    tau = p->tau_cool_s;
    if (p->temp_c <= p->fp_c - p->supercool_k) {
      p->ph = FREEZE;
      /* ice formed at nucleation: c_p * dT / dH_fus, about 1.3 % per K */
      p->frozen = CP_OVER_DH * p->supercool_k;
    }
    break;
  case FREEZE:
    /* energy balance: the heat the bath draws (Newton cooling, same time
     * constant as the liquid) freezes water: c_p / dH_fus per kelvin */
    p->frozen += dt * (p->temp_c - p->bath_c) / p->tau_cool_s * CP_OVER_DH;
    /* the remaining liquid is more concentrated; a little heat-flow offset */
    target = p->fp_c / (1.0 - p->frozen) - 0.03 * p->frozen;
    tau = 4.0;               /* recalescence and probe lag */
    if (p->frozen >= 0.7)
      p->ph = SOLID;
    break;
  case SOLID:
    target = p->bath_c;
    tau = p->tau_solid_s;
    break;
  default:
    target = p->warm_c;
    tau = p->tau_warm_s;
    break;
  }
  p->temp_c += (target - p->temp_c) * (1.0 - exp(-dt / tau));
  return p->temp_c + p->noise_k * gauss();
}

static int gen_large(const char *path, unsigned long rows, unsigned cycles)
{
  enum { NCH = 4 };
  const double dt = 0.1;
  const double fp[NCH] = { 0.0, -0.186, -0.372, -0.744 };
  /* whole rows, so every trigger below fires exactly once per period */
  unsigned long period = rows / cycles > 10 ? rows / cycles : 10;
  struct probe pr[NCH];
  static char buf[1 << 20];
  FILE *f = fopen(path, "w");

  if (f == NULL) {
    fprintf(stderr, "gencsv: %s: %s\n", path, strerror(errno));
    return 4;
  }
  setvbuf(f, buf, _IOFBF, sizeof buf);
  for (int c = 0; c < NCH; c++)
    probe_init(&pr[c], fp[c], -8.0, 5.0, 500.0);
  fputs("time_s,T1 (C),T2 (C),T3 (C),T4 (C)\n", f);
  for (unsigned long i = 0; i < rows; i++) {
    double t = (double)i * dt;
    fprintf(f, "%.1f", t);
    for (int c = 0; c < NCH; c++) {
      /* probes start their cycles staggered by an eighth of a period */
      unsigned long ic = (i + period - period * (unsigned long)c / 8) % period;
      /* warm for the first 30 % of each period, then cool and freeze */
      if (ic == 0)
        probe_warm(&pr[c]);
      else if (ic == period * 3 / 10)
        probe_cool(&pr[c]);
      fprintf(f, ",%.4f", probe_step(&pr[c], dt));
    }
    fputc('\n', f);
  }
  if (fclose(f) != 0) {
    fprintf(stderr, "gencsv: %s: %s\n", path, strerror(errno));
    return 4;
  }
  return 0;
}

/* 1 blank and 19 solutions per group, NaCl, each run its own file. */
static int gen_batch(const char *dir, unsigned runs, unsigned samples)
{
  const double dt = 0.5, solvent_g = 25.0, m_nacl = 58.443;
  char path[4096];
  FILE *sheet;

  if (mkdir(dir, 0777) != 0 && errno != EEXIST) {
    fprintf(stderr, "gencsv: %s: %s\n", dir, strerror(errno));
    return 4;
  }
  snprintf(path, sizeof path, "%s/sheet.csv", dir);
  sheet = fopen(path, "w");
  if (sheet == NULL) {
    fprintf(stderr, "gencsv: %s: %s\n", path, strerror(errno));
    return 4;
  }
  fputs("# synthetic run sheet for the batch speed benchmark\n"
        "run,file,channel,cycle,role,solvent,solvent_g,solute,solute_g,"
        "molar_mass,particles,blank\n", sheet);
  for (unsigned r = 0; r < runs; r++) {
    unsigned group = r / 20, k = r % 20;
    double molality = k == 0 ? 0.0 : 0.01 * k;
    double fp = -KF_WATER * 1.85 * molality; /* i about 1.85 for NaCl */
    struct probe p;
    FILE *f;

    snprintf(path, sizeof path, "%s/run%04u.csv", dir, r);
    f = fopen(path, "w");
    if (f == NULL) {
      fprintf(stderr, "gencsv: %s: %s\n", path, strerror(errno));
      fclose(sheet);
      return 4;
    }
    probe_init(&p, fp, -6.0, 3.0, 150.0);
    probe_cool(&p);
    fputs("time_s,T (C)\n", f);
    for (unsigned i = 0; i < samples; i++)
      fprintf(f, "%.1f,%.4f\n", (double)i * dt, probe_step(&p, dt));
    if (fclose(f) != 0) {
      fprintf(stderr, "gencsv: %s: %s\n", path, strerror(errno));
      fclose(sheet);
      return 4;
    }
    if (k == 0)
      fprintf(sheet, "B%u,run%04u.csv,1,1,blank,water,%.3f,,,,,\n", group,
              r, solvent_g);
    else
      fprintf(sheet, "S%u-%u,run%04u.csv,1,1,sample,water,%.3f,NaCl,%.5f,"
              "%.3f,2,B%u\n", group, k, r, solvent_g,
              molality * solvent_g / 1000.0 * m_nacl, m_nacl, group);
  }
  if (fclose(sheet) != 0)
    return 4;
  return 0;
}

static unsigned long arg_ul(const char *s, unsigned long dflt)
{
  char *end;
  unsigned long v;
  if (s == NULL)
    return dflt;
  errno = 0;
  v = strtoul(s, &end, 10);
  if (errno != 0 || *end != '\0' || v == 0) {
    fprintf(stderr, "gencsv: not a positive count: '%s'\n", s);
    exit(1);
  }
  return v;
}

int main(int argc, char **argv)
{
  if (argc >= 3 && strcmp(argv[1], "large") == 0)
    return gen_large(argv[2], arg_ul(argc > 3 ? argv[3] : NULL, 5000000UL),
                     (unsigned)arg_ul(argc > 4 ? argv[4] : NULL, 12));
  if (argc >= 3 && strcmp(argv[1], "batch") == 0)
    return gen_batch(argv[2], (unsigned)arg_ul(argc > 3 ? argv[3] : NULL, 1000),
                     (unsigned)arg_ul(argc > 4 ? argv[4] : NULL, 2000));
  fputs("usage: gencsv large OUT.csv [ROWS [CYCLES]]\n"
        "       gencsv batch DIR [RUNS [SAMPLES]]\n", stderr);
  return 1;
}
