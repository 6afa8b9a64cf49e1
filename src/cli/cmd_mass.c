/* cli/cmd_mass.c - 'frostfit mass': molar mass of an unknown from one measurement, with its uncertainty budget. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "cli.h"
#include "frostfit/json.h"
#include "frostfit/solvent.h"
#include "frostfit/thermo.h"

#define CMD "mass"
#define DEFAULT_BALANCE_RES_G 0.0001   /* analytical balance, common practice */
#define DEFAULT_THERMO_RES_K 0.01      /* Beckmann-type reading, REFERENCES 8 */
#define DEFAULT_MC_DRAWS 200000
#define DEFAULT_SEED 20261201UL
#define NOTE "one measurement: a solute that associates (or dissociates) " \
             "gives an apparent molar mass that depends on concentration"

static void help(void)
{
  printf(
"usage: frostfit mass --solvent NAME --solvent-g G --solute-g G\n"
"                     (--dt K | --tf-blank C --tf-sample C) [options]\n"
"\n"
"Molar mass of an unknown solute from one freezing-point measurement,\n"
"M2 = Kf * w2 / (dT * w1), with a GUM uncertainty budget and a Monte Carlo\n"
"cross-check.\n"
"\n"
"inputs:\n"
"  --solvent NAME      solvent from the solvent table ('frostfit solvents');\n"
"                      optional when --kf is given\n"
"  --solvents-file F   extra solvent CSV (same format), overrides by name\n"
"  --solvent-g G       mass of solvent w1 [g]\n"
"  --solute-g G        mass of the unknown w2 [g]\n"
"  --dt K              freezing-point depression [K], or:\n"
"  --tf-blank C        freezing point of the pure solvent [C]\n"
"  --tf-sample C       freezing point of the solution [C]\n"
"  --kf K              your own (calibrated) Kf [K kg/mol]; default: table\n"
"uncertainties (standard, k = 1):\n"
"  --u-kf K            of Kf; default 0 (then the budget understates)\n"
"  --balance-res G     balance resolution; each mass is two readings\n"
"                      (tare and gross); default %g g\n"
"  --u-solute-g G      of w2, replaces the balance-resolution part\n"
"  --u-solvent-g G     of w1, replaces the balance-resolution part\n"
"  --thermo-res K      thermometer resolution; dT is two readings on one\n"
"                      thermometer: the offset cancels, resolution does\n"
"                      not; default %g K\n"
"  --u-tf K            of each freezing point (fit, repeatability); default 0\n"
"output:\n"
"  --mc N              Monte Carlo draws (default %d; 0 to skip)\n"
"  --seed N            random seed (default %lu)\n"
"  --json              machine-readable output on stdout\n"
"  --help              this text\n"
"\n"
"One measurement only: solutes that associate (carboxylic acids in\n"
"non-polar solvents) give an apparent molar mass that depends on\n"
"concentration; measure several and extrapolate with 'frostfit series'.\n"
"Many cryoscopy solvents are toxic or flammable: see 'frostfit solvents'.\n"
"\n"
"exit codes: 0 ok, 1 usage, 2 bad input (unknown solvent, non-positive\n"
"mass or depression), 3 no trustworthy result, 4 i/o\n",
    DEFAULT_BALANCE_RES_G, DEFAULT_THERMO_RES_K, DEFAULT_MC_DRAWS,
    DEFAULT_SEED);
}

struct opts {
  const char *solvent, *solvents_file;
  double solvent_g, solute_g, dt, tf_blank, tf_sample, kf, u_kf;
  double balance_res, u_solute, u_solvent, thermo_res, u_tf, mc, seed;
  int json;
};

/* Options taking a number, and where each goes. */
static double *num_slot(struct opts *o, const char *name)
{
  static const char *const names[] = {
    "--solvent-g", "--solute-g", "--dt", "--tf-blank", "--tf-sample", "--kf",
    "--u-kf", "--balance-res", "--u-solute-g", "--u-solvent-g",
    "--thermo-res", "--u-tf", "--mc", "--seed" };
  double *slots[] = { &o->solvent_g, &o->solute_g, &o->dt, &o->tf_blank,
                      &o->tf_sample, &o->kf, &o->u_kf, &o->balance_res,
                      &o->u_solute, &o->u_solvent, &o->thermo_res, &o->u_tf,
                      &o->mc, &o->seed };
  for (size_t i = 0; i < sizeof names / sizeof names[0]; i++)
    if (strcmp(name, names[i]) == 0)
      return slots[i];
  return NULL;
}

/* Returns -1 after a usage message, 1 after --help, 0 to go on. */
static int parse(int argc, char **argv, struct opts *o)
{
  for (int i = 1; i < argc; i++) {
    char name[64];
    const char *a = argv[i], *val = NULL, *eq = strchr(a, '=');
    double *slot;

    if (strcmp(a, "--help") == 0 || strcmp(a, "-h") == 0)
      return help(), 1;
    if (strcmp(a, "--json") == 0) {
      o->json = 1;
      continue;
    }
    if (strncmp(a, "--", 2) != 0)
      return ff_cli_usage(CMD, "unexpected argument '%s'", a), -1;
    size_t n = eq ? (size_t)(eq - a) : strlen(a);
    if (n >= sizeof name)
      return ff_cli_usage(CMD, "unknown option '%s'", a), -1;
    memcpy(name, a, n);
    name[n] = '\0';
    int takes = strcmp(name, "--solvent") == 0 ||
                strcmp(name, "--solvents-file") == 0 ||
                num_slot(o, name) != NULL;
    if (!takes)
      return ff_cli_usage(CMD, "unknown option '%s'", name), -1;
    if (eq)
      val = eq + 1;
    else if (i + 1 < argc)
      val = argv[++i];
    else
      return ff_cli_usage(CMD, "%s needs a value", name), -1;
    if (strcmp(name, "--solvent") == 0)
      o->solvent = val;
    else if (strcmp(name, "--solvents-file") == 0)
      o->solvents_file = val;
    else if ((slot = num_slot(o, name)) != NULL &&
             ff_cli_number(CMD, name, val, slot) != 0)
      return -1;
  }
  return 0;
}

/* "OPT must be positive, got V UNIT" (or "zero or positive"). */
static int bad_input(const char *opt, double v, const char *unit,
                     int zero_ok)
{
  struct ff_diag d = FF_DIAG_INIT;

  ff_diag_set(&d, FF_EINPUT, NULL, "%s must be %s, got %g%s%s", opt,
              zero_ok ? "zero or positive" : "positive", v, unit[0] ? " " : "",
              unit);
  return ff_cli_fail(&d);
}

/* "OPT must be at most MAX UNIT, got V": catches typing slips such as
 * 1e300 g, with the run sheet's ranges (docs/formats/run-sheet.md). */
static int too_large(const char *opt, double v, double max, const char *unit)
{
  struct ff_diag d = FF_DIAG_INIT;

  ff_diag_set(&d, FF_EINPUT, NULL, "%s must be at most %g%s%s, got %g", opt,
              max, unit[0] ? " " : "", unit, v);
  return ff_cli_fail(&d);
}

/* Decimals that show u with two significant digits. */
static int decimals_for(double u)
{
  if (!(u > 0.0) || !isfinite(u))
    return 2;
  int dec = 1 - (int)floor(log10(u));
  return dec < 0 ? 0 : dec > 8 ? 8 : dec;
}

struct budget_line {
  const char *input, *unit;
  double value, u, rel;
};

static int print_json(const struct opts *o, const char *solvent,
                      const char *kf_source, double kf_calc,
                      const char *caution, const struct ff_mass_in *in,
                      const struct ff_mass_out *r,
                      const struct budget_line *b, size_t nb,
                      json_t *warnings)
{
  json_t *root = json_object(), *bud = json_array(), *mc = json_object();
  int rc = 0;

  if (root == NULL || bud == NULL || mc == NULL) {
    json_decref(root);
    json_decref(bud);
    json_decref(mc);
    return -1;
  }
  rc |= ff_json_set_str(root, "solvent", solvent);
  rc |= ff_json_set_num(root, "solvent_g", in->solvent_g.value);
  rc |= ff_json_set_num(root, "solute_g", in->solute_g.value);
  rc |= ff_json_set_num(root, "depression_k", in->depression_k.value);
  rc |= ff_json_set_num(root, "u_depression_k",
                        ff_quantity_u(&in->depression_k));
  if (isfinite(o->tf_blank) && isfinite(o->tf_sample)) {
    rc |= ff_json_set_num(root, "tf_blank_c", o->tf_blank);
    rc |= ff_json_set_num(root, "tf_sample_c", o->tf_sample);
  }
  rc |= ff_json_set_num(root, "kf_k_kg_mol", in->kf.value);
  rc |= ff_json_set_num(root, "u_kf_k_kg_mol", ff_quantity_u(&in->kf));
  rc |= ff_json_set_str(root, "kf_source", kf_source);
  rc |= ff_json_set_num(root, "kf_calc_k_kg_mol", kf_calc);
  rc |= ff_json_set_num(root, "molality_apparent_mol_kg",
                        in->solute_g.value / r->m_g_mol /
                        (in->solvent_g.value / 1000.0));
  rc |= ff_json_set_num(root, "molar_mass_g_mol", r->m_g_mol);
  rc |= ff_json_set_num(root, "u_molar_mass_g_mol", r->u_m_g_mol);
  rc |= ff_json_set_num(root, "expanded_molar_mass_g_mol",
                        r->expanded_m_g_mol);
  rc |= ff_json_set_num(root, "coverage_factor", 2.0);
  for (size_t i = 0; i < nb; i++) {
    json_t *l = json_object();
    if (l == NULL || json_array_append_new(bud, l) != 0)
      return json_decref(root), json_decref(bud), json_decref(mc), -1;
    rc |= ff_json_set_str(l, "input", b[i].input);
    rc |= ff_json_set_str(l, "unit", b[i].unit);
    rc |= ff_json_set_num(l, "value", b[i].value);
    rc |= ff_json_set_num(l, "u", b[i].u);
    rc |= ff_json_set_num(l, "relative_u", b[i].rel);
  }
  rc |= json_object_set_new(root, "budget", bud);
  if (r->mc_n > 0) {
    json_t *ci = json_array();
    rc |= ci == NULL;
    rc |= json_object_set_new(mc, "draws", json_integer((json_int_t)r->mc_n));
    rc |= json_object_set_new(mc, "seed", json_integer((json_int_t)o->seed));
    rc |= ff_json_set_num(mc, "mean_g_mol", r->mc_mean_g_mol);
    rc |= ff_json_set_num(mc, "u_g_mol", r->mc_u_g_mol);
    if (ci != NULL) {
      rc |= json_array_append_new(ci, ff_json_num(r->mc_lo95_g_mol));
      rc |= json_array_append_new(ci, ff_json_num(r->mc_hi95_g_mol));
      rc |= json_object_set_new(mc, "ci95", ci);
    }
    rc |= json_object_set_new(mc, "agrees_with_gum",
                              json_boolean(fabs(r->mc_u_g_mol / r->u_m_g_mol -
                                                1.0) < 0.10));
    rc |= json_object_set_new(root, "monte_carlo", mc);
  } else {
    json_decref(mc);
    rc |= json_object_set_new(root, "monte_carlo", json_null());
  }
  rc |= ff_json_set_str(root, "caution", caution);
  rc |= ff_json_set_str(root, "note", NOTE);
  rc |= json_object_set(root, "warnings", warnings);
  if (rc != 0) {
    json_decref(root);
    return -1;
  }
  rc = ff_json_write(root, stdout);
  json_decref(root);
  return rc;
}

static void print_text(const struct opts *o, const char *solvent,
                       const char *kf_source, double kf_calc,
                       const char *caution, const struct ff_mass_in *in,
                       const struct ff_mass_out *r,
                       const struct budget_line *b, size_t nb)
{
  int dec = decimals_for(r->u_m_g_mol);
  double u_dt = ff_quantity_u(&in->depression_k);

  printf("molar mass of an unknown, one measurement\n\n");
  printf("  solvent            %s\n", solvent);
  printf("  solvent mass w1    %.4f g\n", in->solvent_g.value);
  printf("  solute mass w2     %.4f g\n", in->solute_g.value);
  if (isfinite(o->tf_blank) && isfinite(o->tf_sample))
    printf("  freezing points    %.4f C (blank), %.4f C (sample)\n",
           o->tf_blank, o->tf_sample);
  printf("  depression dT      %.*f K  (u %#.2g K)\n", decimals_for(u_dt),
         in->depression_k.value, u_dt);
  printf("  Kf used            %.4g K kg/mol  (u %#.2g; %s)\n", in->kf.value,
         ff_quantity_u(&in->kf), kf_source);
  if (isfinite(kf_calc))
    printf("  Kf from constants  %.4g K kg/mol  (R Tf^2 M / dH_fus, table "
           "constants)\n", kf_calc);
  printf("\n  M2 = Kf w2 / (dT w1) = %.*f g/mol\n", dec, r->m_g_mol);
  printf("  standard uncertainty u   %.*f g/mol (%.2f %%)\n", dec,
         r->u_m_g_mol, 100.0 * r->u_m_g_mol / r->m_g_mol);
  printf("  expanded U (k = 2)       %.*f g/mol  -> M2 = %.*f +- %.*f "
         "g/mol\n", dec, r->expanded_m_g_mol, dec, r->m_g_mol, dec,
         r->expanded_m_g_mol);
  printf("\nuncertainty budget (relative standard uncertainties)\n");
  for (size_t i = 0; i < nb; i++)
    printf("  %-16s %10.5g %-9s u %-10.3g %7.2g %%\n", b[i].input,
           b[i].value, b[i].unit, b[i].u, 100.0 * b[i].rel);
  printf("  %-16s %45.2g %%\n", "combined", 100.0 * r->u_m_g_mol / r->m_g_mol);
  if (r->mc_n > 0) {
    double ratio = r->mc_u_g_mol / r->u_m_g_mol;
    printf("\nMonte Carlo check (%zu draws, seed %.0f)\n", r->mc_n, o->seed);
    printf("  mean %.*f g/mol, u %.*f g/mol, 95 %% interval [%.*f, %.*f]\n",
           dec, r->mc_mean_g_mol, dec, r->mc_u_g_mol, dec, r->mc_lo95_g_mol,
           dec, r->mc_hi95_g_mol);
    printf("  %s (u ratio MC/GUM %.3f)\n", fabs(ratio - 1.0) < 0.10 ?
           "agrees with the GUM propagation within 10 %" :
           "DISAGREES with the GUM propagation by more than 10 %: prefer the "
           "Monte Carlo interval", ratio);
  }
  printf("\nnote: %s\n", NOTE);
  if (caution[0] != '\0')
    printf("caution: %s\n", caution);
}

int ff_cmd_mass(int argc, char **argv)
{
  struct opts o = { .solvent_g = NAN, .solute_g = NAN, .dt = NAN,
                    .tf_blank = NAN, .tf_sample = NAN, .kf = NAN,
                    .u_kf = NAN, .balance_res = DEFAULT_BALANCE_RES_G,
                    .u_solute = NAN, .u_solvent = NAN,
                    .thermo_res = DEFAULT_THERMO_RES_K, .u_tf = 0.0,
                    .mc = DEFAULT_MC_DRAWS, .seed = (double)DEFAULT_SEED };
  struct ff_solvent_table tab = FF_SOLVENT_TABLE_INIT;
  struct ff_diag d = FF_DIAG_INIT;
  const struct ff_solvent *s = NULL;
  char kf_source[600], path[4200];
  int rc = parse(argc, argv, &o);

  if (rc != 0)
    return rc > 0 ? FF_OK : FF_EUSAGE;
  if (o.solvent == NULL && !isfinite(o.kf))
    return ff_cli_usage(CMD, "give --solvent NAME (or your own --kf)");
  if (!isfinite(o.solvent_g) || !isfinite(o.solute_g))
    return ff_cli_usage(CMD, "give --solvent-g and --solute-g");
  int have_tf = isfinite(o.tf_blank) || isfinite(o.tf_sample);
  if (isfinite(o.dt) == have_tf)
    return ff_cli_usage(CMD, "give either --dt or both --tf-blank and "
                        "--tf-sample");
  if (have_tf && !(isfinite(o.tf_blank) && isfinite(o.tf_sample)))
    return ff_cli_usage(CMD, "--tf-blank and --tf-sample go together");
  if (!(o.mc >= 0.0) || o.mc > 1e7 || floor(o.mc) < o.mc ||
      (o.mc > 0.0 && o.mc < 1000.0))
    return ff_cli_usage(CMD, "--mc expects 0 or a whole number 1000..1e7");
  if (!(o.seed >= 0.0) || o.seed > 4294967295.0 || floor(o.seed) < o.seed)
    return ff_cli_usage(CMD, "--seed expects a whole number 0..4294967295");

  /* Values that cannot support a molar mass are bad input (exit 2). */
  if (!(o.solvent_g > 0.0))
    return bad_input("--solvent-g", o.solvent_g, "g", 0);
  if (!(o.solute_g > 0.0))
    return bad_input("--solute-g", o.solute_g, "g", 0);
  if (have_tf)
    o.dt = o.tf_blank - o.tf_sample;
  if (!(o.dt > 0.0)) {
    if (have_tf)
      ff_diag_set(&d, FF_EINPUT, NULL, "the sample (%g C) must freeze below "
                  "its blank (%g C): depression %g K", o.tf_sample,
                  o.tf_blank, o.dt);
    else
      ff_diag_set(&d, FF_EINPUT, NULL, "--dt must be positive, got %g K",
                  o.dt);
    return ff_cli_fail(&d);
  }
  if (isfinite(o.kf) && !(o.kf > 0.0))
    return bad_input("--kf", o.kf, "K kg/mol", 0);
  const struct { const char *name; double v; } nonneg[] = {
    { "--u-kf", o.u_kf }, { "--balance-res", o.balance_res },
    { "--u-solute-g", o.u_solute }, { "--u-solvent-g", o.u_solvent },
    { "--thermo-res", o.thermo_res }, { "--u-tf", o.u_tf } };
  for (size_t i = 0; i < sizeof nonneg / sizeof nonneg[0]; i++)
    if (nonneg[i].v < 0.0)
      return bad_input(nonneg[i].name, nonneg[i].v, "", 1);
  const struct { const char *name; double v, max; const char *unit; } cap[] = {
    { "--solvent-g", o.solvent_g, 100000.0, "g" },
    { "--solute-g", o.solute_g, 10000.0, "g" },
    { have_tf ? "the depression" : "--dt", o.dt, 200.0, "K" },
    { "--kf", o.kf, 1000.0, "K kg/mol" },
    { "--u-kf", o.u_kf, 1000.0, "K kg/mol" },
    { "--balance-res", o.balance_res, 10.0, "g" },
    { "--u-solute-g", o.u_solute, 10000.0, "g" },
    { "--u-solvent-g", o.u_solvent, 100000.0, "g" },
    { "--thermo-res", o.thermo_res, 10.0, "K" },
    { "--u-tf", o.u_tf, 10.0, "K" } };
  for (size_t i = 0; i < sizeof cap / sizeof cap[0]; i++)
    if (cap[i].v > cap[i].max)   /* NaN (not given) passes */
      return too_large(cap[i].name, cap[i].v, cap[i].max, cap[i].unit);

  if (o.solvent != NULL) {
    snprintf(path, sizeof path, "%s/solvents.csv", ff_cli_datadir());
    if ((rc = ff_solvent_table_load(&tab, path, &d)) != FF_OK ||
        (o.solvents_file != NULL &&
         (rc = ff_solvent_table_load(&tab, o.solvents_file, &d)) != FF_OK)) {
      ff_solvent_table_release(&tab);
      return ff_cli_fail(&d);
    }
    s = ff_solvent_find(&tab, o.solvent);
    if (s == NULL) {
      ff_diag_set(&d, FF_EINPUT, NULL, "unknown solvent '%s' (see 'frostfit "
                  "solvents', or add it with --solvents-file)", o.solvent);
      ff_solvent_table_release(&tab);
      return ff_cli_fail(&d);
    }
  }

  json_t *warnings = json_array();
  if (warnings == NULL) {
    ff_solvent_table_release(&tab);
    ff_cli_msg("out of memory");
    return FF_EIO;
  }
  double kf_calc = s ? ff_solvent_kf_calc(s) : NAN;
  struct ff_mass_in in;
  memset(&in, 0, sizeof in);
  if (isfinite(o.kf)) {
    in.kf.value = o.kf;
    snprintf(kf_source, sizeof kf_source, "given with --kf");
  } else if (s != NULL && s->kf_k_kg_mol > 0.0) {
    in.kf.value = s->kf_k_kg_mol;
    snprintf(kf_source, sizeof kf_source, "solvent table '%s': %s", s->name,
             s->source);
  } else {
    ff_diag_set(&d, FF_EINPUT, NULL, "solvent '%s' has no tabulated Kf: give "
                "your own with --kf", s ? s->name : "?");
    ff_solvent_table_release(&tab);
    json_decref(warnings);
    return ff_cli_fail(&d);
  }
  if (isfinite(o.u_kf)) {
    in.kf.u_normal = o.u_kf;
  } else {
    const char *w = "no --u-kf: Kf taken as exact, so the uncertainty is "
                    "understated (published Kf values differ by several %; "
                    "calibrate Kf with a standard of known molar mass)";
    ff_cli_msg("%s", w);
    json_array_append_new(warnings, json_string(w));
  }
  if (isfinite(kf_calc) && fabs(kf_calc / in.kf.value - 1.0) > 0.03) {
    char w[200];
    snprintf(w, sizeof w, "Kf used (%.4g) and Kf from the table's constants "
             "(%.4g) differ by %.0f %%", in.kf.value, kf_calc,
             100.0 * fabs(kf_calc / in.kf.value - 1.0));
    ff_cli_msg("%s", w);
    json_array_append_new(warnings, json_string(w));
  }
  /* Each mass: tare and gross readings, rectangular (GUM F.2.2.1). */
  in.solute_g.value = o.solute_g;
  in.solvent_g.value = o.solvent_g;
  if (isfinite(o.u_solute))
    in.solute_g.u_normal = o.u_solute;
  else
    in.solute_g.rect_half_width = o.balance_res / 2.0, in.solute_g.n_rect = 2;
  if (isfinite(o.u_solvent))
    in.solvent_g.u_normal = o.u_solvent;
  else
    in.solvent_g.rect_half_width = o.balance_res / 2.0,
    in.solvent_g.n_rect = 2;
  in.depression_k.value = o.dt;
  in.depression_k.u_normal = sqrt(2.0) * o.u_tf;
  in.depression_k.rect_half_width = o.thermo_res / 2.0;
  in.depression_k.n_rect = 2;

  struct ff_mass_out r;
  if (o.mc > 0.0)
    rc = ff_thermo_molar_mass_mc(&in, (size_t)o.mc, (unsigned long)o.seed, &r,
                                 &d);
  else
    rc = ff_thermo_molar_mass(&in, &r, &d);
  if (rc != FF_OK) {
    ff_solvent_table_release(&tab);
    json_decref(warnings);
    return ff_cli_fail(&d);
  }
  if (r.mc_n > 0 && !(fabs(r.mc_u_g_mol / r.u_m_g_mol - 1.0) < 0.10)) {
    const char *w = "Monte Carlo and GUM uncertainties differ by more than "
                    "10 %: the first-order propagation is not adequate here";
    ff_cli_msg("%s", w);
    json_array_append_new(warnings, json_string(w));
  }

  struct budget_line b[] = {
    { "Kf", "K kg/mol", in.kf.value, ff_quantity_u(&in.kf), r.rel_kf },
    { "solute mass w2", "g", in.solute_g.value, ff_quantity_u(&in.solute_g),
      r.rel_solute },
    { "solvent mass w1", "g", in.solvent_g.value,
      ff_quantity_u(&in.solvent_g), r.rel_solvent },
    { "depression dT", "K", in.depression_k.value,
      ff_quantity_u(&in.depression_k), r.rel_depression },
  };
  const char *caution = s ? s->hazard : "";
  const char *sname = s ? s->name : "(not given)";
  if (o.json) {
    if (print_json(&o, sname, kf_source, kf_calc, caution, &in, &r, b, 4,
                   warnings) != 0) {
      ff_cli_msg("cannot write the JSON output");
      rc = FF_EIO;
    }
  } else {
    print_text(&o, sname, kf_source, kf_calc, caution, &in, &r, b, 4);
  }
  json_decref(warnings);
  ff_solvent_table_release(&tab);
  return rc;
}
