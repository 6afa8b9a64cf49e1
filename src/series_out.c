/* series_out.c - the series result as JSON (the DESIGN.md contract) and as
 * a spreadsheet CSV; the human table lives in the CLI. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include <csv.h>

#include "series_impl.h"
#include "frostfit/json.h"

#define CAUTION "osmolality values are not a validated clinical or " \
  "pharmaceutical measurement; defer to the applicable pharmacopoeia, " \
  "local codes and licensed practice"

static const char *status_key(enum ff_status st)
{
  switch (st) {
  case FF_OK: return "ok";
  case FF_EUSAGE: return "usage";
  case FF_EINPUT: return "bad_input";
  case FF_EUNTRUSTED: return "untrusted";
  case FF_EIO: return "io";
  }
  return "?";
}

static json_t *diag_json(const struct ff_diag *d)
{
  char buf[1200];

  if (d->status == FF_OK)
    return json_null();
  return ff_json_str(ff_diag_format(d, buf, sizeof buf));
}

static json_t *pair(double a, double b)
{
  json_t *v = json_array();

  json_array_append_new(v, ff_json_num(a));
  json_array_append_new(v, ff_json_num(b));
  return v;
}

/* The event's quality flags, then the run's own warnings (series.h). */
static json_t *flags_json(unsigned flags, unsigned run_flags)
{
  json_t *v = json_array();

  for (unsigned b = 0; b < FF_FLAG_COUNT; b++)
    if (flags & (1u << b))
      json_array_append_new(v, ff_json_str(ff_flag_name(1u << b)));
  for (unsigned b = 0; b < FF_SERIES_RUN_FLAG_COUNT; b++)
    if (run_flags & (1u << b))
      json_array_append_new(v, ff_json_str(ff_series_run_flag_name(1u << b)));
  return v;
}

/* The sentences behind the run's warnings, in flag order. */
static json_t *warnings_json(const struct ff_series *s,
                             const struct ff_series_run *r)
{
  json_t *v = json_array();
  char note[512];

  for (unsigned b = 0; b < FF_SERIES_RUN_FLAG_COUNT; b++)
    if (ff_series_run_note(s, r, 1u << b, note, sizeof note)[0])
      json_array_append_new(v, ff_json_str(note));
  return v;
}

/* Probe keys appear only when the sheet has a 'probe' column, so output
 * of sheets without one stays as it was. */
static int has_probes(const struct ff_series *s)
{
  return s->sheet->col[FF_SC_PROBE] != 0;
}

/* Numbers of a run; everything NaN (null) when the run failed, so a failed
 * analysis never shows a number. */
static json_t *run_json(const struct ff_series *s,
                        const struct ff_series_run *r)
{
  const struct ff_sheet_row *row = &s->sheet->row[r->row];
  int ok = r->status == FF_OK;
  json_t *o = json_object();
#define NUM(k, x) ff_json_set_num(o, (k), ok ? (x) : NAN)

  ff_json_set_str(o, "run", row->run);
  ff_json_set_str(o, "role", row->role == FF_SHEET_ROLE_NONE
                             ? NULL : ff_sheet_role_name(row->role));
  json_object_set_new(o, "line", json_integer((json_int_t)row->line));
  ff_json_set_str(o, "file", row->file);
  ff_json_set_str(o, "channel", row->channel);
  if (has_probes(s))
    ff_json_set_str(o, "probe", row->probe[0] ? row->probe : NULL);
  if (row->cycle == FF_SHEET_CYCLE_LAST)
    ff_json_set_str(o, "cycle", "last");
  else
    json_object_set_new(o, "cycle", json_integer(row->cycle));
  ff_json_set_str(o, "solvent", row->solvent);
  ff_json_set_str(o, "solute", row->solute[0] ? row->solute : NULL);
  ff_json_set_str(o, "blank", row->blank_row >= 0
                  ? s->sheet->row[row->blank_row].run : NULL);
  ff_json_set_str(o, "status", status_key(r->status));
  json_object_set_new(o, "error", diag_json(&r->diag));
  NUM("freezing_point_c", r->tf_c);
  NUM("u_freezing_point_k", r->u_tf_k);
  ff_json_set_str(o, "method", ok && r->has_event
                  ? ff_method_name(r->event.method) : NULL);
  NUM("supercooling_k", r->has_event ? r->event.supercooling_k : NAN);
  json_object_set_new(o, "flags", flags_json(r->has_event ? r->event.flags
                                                          : 0, r->flags));
  if (has_probes(s))
    json_object_set_new(o, "warnings", warnings_json(s, r));
  NUM("blank_freezing_point_c", r->tf_blank_c);
  NUM("depression_observed_k", r->depression_obs_k);
  NUM("frozen_fraction", r->frozen_fraction);
  NUM("frozen_fraction_at_peak", r->has_event ? r->event.frozen_fraction
                                               : NAN);
  json_object_set_new(o, "frozen_fraction_applied",
                      json_boolean(ok && r->correction_applied));
  NUM("depression_k", r->depression_k);
  NUM("u_depression_k", r->u_depression_k);
  NUM("molality_mol_kg", r->molality_mol_kg);
  NUM("u_molality_mol_kg", r->u_molality_mol_kg);
  NUM("kf_k_kg_mol", r->kf_k_kg_mol);
  NUM("u_kf_k_kg_mol", r->u_kf_k_kg_mol);
  ff_json_set_str(o, "kf_source", ok && r->kf_source != FF_KF_NONE
                  ? ff_kf_source_name(r->kf_source) : NULL);
  ff_json_set_str(o, "kf_from", ok && r->kf_from[0] ? r->kf_from : NULL);
  if (has_probes(s))
    ff_json_set_str(o, "kf_probe", ok && r->kf_probe[0] ? r->kf_probe : NULL);
  NUM("ideal_depression_k", r->th.ideal_depression_k);
  NUM("vant_hoff_i", r->th.vant_hoff_i);
  NUM("u_vant_hoff_i", r->th.u_vant_hoff_i);
  NUM("u_vant_hoff_i_monte_carlo", r->mc_u_vant_hoff_i);
  if (r->particles_known && row->role != FF_SHEET_BLANK
      && row->role != FF_SHEET_UNKNOWN)
    json_object_set_new(o, "particles", json_integer(r->particles.nu));
  else
    json_object_set_new(o, "particles", json_null());
  NUM("osmotic_coefficient", r->th.osmotic_coefficient);
  NUM("u_osmotic_coefficient", r->th.u_osmotic_coefficient);
  NUM("osmolality_osmol_kg", isfinite(r->th.osmolality_osmol_kg)
      ? r->th.osmolality_osmol_kg : r->osmolality_osmol_kg);
  NUM("u_osmolality_osmol_kg", r->th.u_osmolality_osmol_kg);
  NUM("water_activity", r->is_water ? r->th.activity : NAN);
  NUM("solvent_activity", r->th.activity);
  NUM("osmotic_coefficient_exact", r->th.osmotic_coefficient_exact);
  NUM("osmolality_exact_osmol_kg", r->th.osmolality_exact_osmol_kg);
  NUM("kf_calibrated_k_kg_mol", r->kf_cal_k_kg_mol);
  NUM("u_kf_calibrated_k_kg_mol", r->u_kf_cal_k_kg_mol);
  NUM("concentration_g_kg", r->conc_g_kg);
  NUM("molar_mass_g_mol", r->mass.m_g_mol);
  NUM("u_molar_mass_g_mol", r->mass.u_m_g_mol);
  NUM("u_molar_mass_g_mol_monte_carlo", r->mass.mc_u_g_mol);
  ff_json_set_str(o, "note", row->note[0] ? row->note : NULL);
#undef NUM
  return o;
}

static json_t *model_json(const struct ff_series_solute *g,
                          const struct ff_fit *f)
{
  json_t *o = json_object(), *par = json_object();
  int ok = f->status == FF_OK;

  ff_json_set_str(o, "model", ff_regress_model_name(f->model));
  ff_json_set_str(o, "status", status_key(f->status));
  ff_json_set_str(o, "reason", ok ? NULL : f->reason);
  ff_json_set_num(o, "i_limit", ok ? f->i_limit : NAN);
  ff_json_set_num(o, "u_i_limit", ok ? f->u_i_limit : NAN);
  json_object_set_new(o, "ci95", ok ? pair(f->ci_limit[0], f->ci_limit[1])
                                    : pair(NAN, NAN));
  json_object_set_new(o, "limit_fixed", json_boolean(ok && f->limit_fixed));
  json_object_set_new(o, "preferred", json_boolean(
                        ok && g->reg.has_preferred
                        && g->reg.preferred == f->model));
  for (size_t k = 0; ok && k < f->npar; k++) {
    json_t *p = json_object();
    ff_json_set_num(p, "value", f->par[k]);
    ff_json_set_num(p, "se", f->se[k]);
    json_object_set_new(p, "ci95", pair(f->ci_lo[k], f->ci_hi[k]));
    json_object_set_new(par, f->par_name[k], p);
  }
  json_object_set_new(o, "parameters", par);
  json_object_set_new(o, "n", json_integer((json_int_t)f->n));
  json_object_set_new(o, "dof", json_integer((json_int_t)f->dof));
  ff_json_set_num(o, "chi2_reduced", ok ? f->chi2_red : NAN);
  ff_json_set_num(o, "aicc", ok && f->has_aicc ? f->aicc : NAN);
  ff_json_set_num(o, "aic", ok ? f->aic : NAN);
  if (ok && (f->model == FF_REGRESS_ION_PAIRING
             || f->model == FF_REGRESS_ASSOCIATION)) {
    ff_json_set_num(o, "k_kg_mol", f->k_kg_mol);
    ff_json_set_num(o, "u_k_kg_mol", f->u_k_kg_mol);
    json_object_set_new(o, "ci95_k", pair(f->ci_k[0], f->ci_k[1]));
  }
  ff_json_set_str(o, "note", ok && f->note[0] ? f->note : NULL);
  return o;
}

/* The sheet ids of runs idx[0..n) (indices into s->runs), as an array. */
static json_t *run_ids_json(const struct ff_series *s, const size_t *idx,
                            size_t n)
{
  json_t *a = json_array();

  for (size_t k = 0; a != NULL && k < n; k++)
    json_array_append_new(a, ff_json_str(s->sheet->row[s->runs[idx[k]].row]
                                           .run));
  return a;
}

static json_t *solute_json(const struct ff_series *s,
                           const struct ff_series_solute *g)
{
  json_t *o = json_object(), *models = json_array();
  int ok = g->status == FF_OK;

  ff_json_set_str(o, "solute", g->solute);
  ff_json_set_str(o, "solvent", g->solvent);
  json_object_set_new(o, "runs", run_ids_json(s, g->runs, g->n));
  json_object_set_new(o, "particles", g->particles_known
                      ? json_integer(g->particles.nu) : json_null());
  ff_json_set_str(o, "particles_how", g->particles_how);
  if (g->particles_known && g->particles.nu >= 2) {
    json_object_set_new(o, "z_plus", json_integer(g->particles.z_plus));
    json_object_set_new(o, "z_minus", json_integer(g->particles.z_minus));
  }
  ff_json_set_num(o, "mean_freezing_point_c", g->mean_tf_c);
  ff_json_set_num(o, "a_phi", g->a_phi);
  ff_json_set_str(o, "status", status_key(g->status));
  json_object_set_new(o, "error", diag_json(&g->diag));
  for (unsigned m = 0; ok && m < FF_REGRESS_NMODELS; m++)
    if (g->reg.fit[m].attempted)
      json_array_append_new(models, model_json(g, &g->reg.fit[m]));
  json_object_set_new(o, "models", models);
  ff_json_set_str(o, "preferred", ok && g->reg.has_preferred
                  ? ff_regress_model_name(g->reg.preferred) : NULL);
  ff_json_set_str(o, "criterion", ok && g->reg.has_preferred
                  ? g->reg.criterion : NULL);
  json_object_set_new(o, "particles_inferred",
                      ok && g->reg.has_particles && g->reg.particles_inferred
                      ? json_integer(g->reg.particles_inferred)
                      : json_null());
  json_object_set_new(o, "particles_nearest", ok && g->reg.has_particles
                      ? json_integer(g->reg.particles_nearest)
                      : json_null());
  ff_json_set_str(o, "particles_model", ok && g->reg.has_particles
                  ? ff_regress_model_name(g->reg.particles_model) : NULL);
  ff_json_set_num(o, "alpha", ok && g->reg.has_alpha ? g->reg.alpha : NAN);
  ff_json_set_num(o, "u_alpha", ok && g->reg.has_alpha ? g->reg.u_alpha
                                                       : NAN);
  if (ok && g->has_mc) {
    json_t *mc = json_object();
    json_object_set_new(mc, "draws", json_integer((json_int_t)g->mc.n_draws));
    json_object_set_new(mc, "refits_ok", json_integer((json_int_t)g->mc.n_ok));
    ff_json_set_num(mc, "u_i_limit", g->mc.sd);
    ff_json_set_num(mc, "u_i_limit_propagated", g->mc.u_propagated);
    ff_json_set_num(mc, "ratio", g->mc.ratio);
    json_object_set_new(mc, "interval", pair(g->mc.q_lo, g->mc.q_hi));
    json_object_set_new(o, "monte_carlo", mc);
  } else {
    json_object_set_new(o, "monte_carlo", json_null());
  }
  return o;
}

static const char *mm_method(enum ff_mm_method m)
{
  return m == FF_MM_LINEAR ? "linear" : m == FF_MM_RECIPROCAL ? "reciprocal"
                                                               : "single";
}

static json_t *unknown_json(const struct ff_series *s,
                            const struct ff_series_unknown *g)
{
  json_t *o = json_object();
  int ok = g->status == FF_OK;

  ff_json_set_str(o, "solute", g->solute);
  ff_json_set_str(o, "solvent", g->solvent);
  json_object_set_new(o, "runs", run_ids_json(s, g->runs, g->n));
  ff_json_set_str(o, "status", status_key(g->status));
  json_object_set_new(o, "error", diag_json(&g->diag));
  ff_json_set_num(o, "molar_mass_g_mol", ok ? g->mm.m0_g_mol : NAN);
  ff_json_set_num(o, "u_molar_mass_g_mol", ok ? g->mm.u_m0_g_mol : NAN);
  json_object_set_new(o, "ci95", ok ? pair(g->mm.ci[0], g->mm.ci[1])
                                    : pair(NAN, NAN));
  ff_json_set_str(o, "method", ok ? mm_method(g->mm.preferred) : NULL);
  ff_json_set_str(o, "note", ok && g->mm.note[0] ? g->mm.note : NULL);
  return o;
}

/* One replicate group: the keys of docs/formats/series-output.md. */
static json_t *repl_json(const struct ff_series *s,
                         const struct ff_series_repl *g)
{
  json_t *o = json_object(), *flags = json_array();
  char note[256];

  ff_json_set_str(o, "role", ff_sheet_role_name(g->role));
  ff_json_set_str(o, "solute", g->solute);
  ff_json_set_str(o, "solvent", g->solvent);
  ff_json_set_num(o, "molality_mol_kg", g->molality_mol_kg);
  ff_json_set_num(o, "concentration_g_kg", g->conc_g_kg);
  json_object_set_new(o, "n", json_integer((json_int_t)g->n));
  json_object_set_new(o, "runs", run_ids_json(s, g->runs, g->n));
  ff_json_set_num(o, "depression_mean_k", g->depression_mean_k);
  ff_json_set_num(o, "depression_sd_k", g->depression_sd_k);
  ff_json_set_num(o, "depression_se_k", g->depression_se_k);
  ff_json_set_num(o, "depression_weighted_k", g->depression_weighted_k);
  ff_json_set_num(o, "u_depression_weighted_k", g->u_depression_weighted_k);
  ff_json_set_num(o, "chi2", g->chi2);
  json_object_set_new(o, "dof", json_integer((json_int_t)g->dof));
  ff_json_set_num(o, "p_value", g->p_value);
  ff_json_set_num(o, "birge_ratio", g->birge_ratio);
  ff_json_set_num(o, "vant_hoff_i_mean", g->vant_hoff_i_mean);
  ff_json_set_num(o, "vant_hoff_i_sd", g->vant_hoff_i_sd);
  if (g->flags & FF_SERIES_REPL_SCATTER)
    json_array_append_new(flags, ff_json_str("replicate_scatter"));
  json_object_set_new(o, "flags", flags);
  ff_series_repl_note(g, note, sizeof note);
  ff_json_set_str(o, "note", note[0] ? note : NULL);
  return o;
}

/* One Kf calibration; with_probe adds the probe id after the solvent. */
static json_t *kfcal_json(const struct ff_series_kfcal *c, int with_probe)
{
  json_t *o = json_object();

  ff_json_set_str(o, "solvent", c->solvent);
  if (with_probe)
    ff_json_set_str(o, "probe", c->probe);
  ff_json_set_num(o, "kf_k_kg_mol", c->kf_k_kg_mol);
  ff_json_set_num(o, "u_kf_k_kg_mol", c->u_kf_k_kg_mol);
  ff_json_set_num(o, "birge_ratio", c->birge_ratio);   /* null: n < 2 */
  ff_json_set_str(o, "standards", c->runs);
  return o;
}

json_t *ff_series_to_json(const struct ff_series *s)
{
  json_t *root = json_object(), *runs = json_array(), *sol = json_array();
  json_t *unk = json_array(), *cal = json_array();

  if (root == NULL || runs == NULL || sol == NULL || unk == NULL
      || cal == NULL) {
    json_decref(root);
    json_decref(runs);
    json_decref(sol);
    json_decref(unk);
    json_decref(cal);
    return NULL;
  }
  ff_json_set_str(root, "sheet", s->sheet->path);
  ff_json_set_str(root, "caution", CAUTION);
  for (size_t k = 0; k < s->n_runs; k++)
    json_array_append_new(runs, run_json(s, &s->runs[k]));
  for (size_t k = 0; k < s->n_kfcal; k++)
    json_array_append_new(cal, kfcal_json(&s->kfcal[k], 0));
  for (size_t k = 0; k < s->n_solutes; k++)
    json_array_append_new(sol, solute_json(s, &s->solutes[k]));
  for (size_t k = 0; k < s->n_unknowns; k++)
    json_array_append_new(unk, unknown_json(s, &s->unknowns[k]));
  json_object_set_new(root, "runs", runs);
  json_object_set_new(root, "kf_calibrations", cal);
  if (has_probes(s)) {
    json_t *pc = json_array();
    for (size_t k = 0; pc != NULL && k < s->n_kfcal_probe; k++)
      json_array_append_new(pc, kfcal_json(&s->kfcal_probe[k], 1));
    json_object_set_new(root, "kf_calibrations_by_probe", pc);
  }
  json_object_set_new(root, "solutes", sol);
  json_object_set_new(root, "unknowns", unk);
  {
    json_t *rep = json_array();
    for (size_t k = 0; rep != NULL && k < s->n_repl; k++)
      json_array_append_new(rep, repl_json(s, &s->repl[k]));
    json_object_set_new(root, "replicates", rep);
  }
  json_object_set_new(root, "runs_failed",
                      json_integer((json_int_t)s->n_failed));
  return root;
}

/* ---- CSV ---- */

static int text(FILE *f, const char *s, int last)
{
  if (s != NULL && csv_fwrite(f, s, strlen(s)) != 0)
    return -1;
  return fputc(last ? '\n' : ',', f) == EOF ? -1 : 0;
}

static int num(FILE *f, double x, int last)
{
  if (isfinite(x) && fprintf(f, "%.7g", x) < 0)
    return -1;
  return fputc(last ? '\n' : ',', f) == EOF ? -1 : 0;
}

int ff_series_write_csv(const struct ff_series *s, FILE *f)
{
  int e = 0;

  e |= fputs("section,run,role,solvent,solute,status,freezing_point_c,"
             "u_freezing_point_k,supercooling_k,depression_k,u_depression_k,"
             "frozen_fraction,molality_mol_kg,u_molality_mol_kg,kf_k_kg_mol,"
             "kf_source,vant_hoff_i,u_vant_hoff_i,u_vant_hoff_i_monte_carlo,"
             "osmotic_coefficient,osmolality_mosmol_kg,water_activity,"
             "molar_mass_g_mol,u_molar_mass_g_mol,message\n", f) < 0;
  for (size_t k = 0; k < s->n_runs && !e; k++) {
    const struct ff_series_run *r = &s->runs[k];
    const struct ff_sheet_row *row = &s->sheet->row[r->row];
    int ok = r->status == FF_OK;
    char buf[1200];
#define N(x) num(f, ok ? (x) : NAN, 0)
    e |= text(f, "run", 0) | text(f, row->run, 0)
       | text(f, row->role == FF_SHEET_ROLE_NONE
                 ? "" : ff_sheet_role_name(row->role), 0) | text(f, row->solvent, 0)
       | text(f, row->solute, 0) | text(f, status_key(r->status), 0)
       | N(r->tf_c) | N(r->u_tf_k)
       | N(r->has_event ? r->event.supercooling_k : NAN)
       | N(row->role == FF_SHEET_BLANK ? NAN : r->depression_k)
       | N(row->role == FF_SHEET_BLANK ? NAN : r->u_depression_k)
       | N(r->frozen_fraction) | N(r->molality_mol_kg)
       | N(r->u_molality_mol_kg) | N(r->kf_k_kg_mol)
       | text(f, ok && r->kf_source ? ff_kf_source_name(r->kf_source) : "",
              0)
       | N(r->th.vant_hoff_i) | N(r->th.u_vant_hoff_i)
       | N(r->mc_u_vant_hoff_i) | N(r->th.osmotic_coefficient)
       | N(1000.0 * (isfinite(r->th.osmolality_osmol_kg)
                     ? r->th.osmolality_osmol_kg : r->osmolality_osmol_kg))
       | N(r->is_water ? r->th.activity : NAN) | N(r->mass.m_g_mol)
       | N(r->mass.u_m_g_mol)
       | text(f, ok ? "" : ff_diag_format(&r->diag, buf, sizeof buf), 1);
#undef N
  }
  e |= fputs("\nsection,solute,solvent,model,status,i_limit,u_i_limit,"
             "ci95_lo,ci95_hi,preferred,particles,particles_inferred,"
             "message\n", f) < 0;
  for (size_t k = 0; k < s->n_solutes && !e; k++) {
    const struct ff_series_solute *g = &s->solutes[k];
    for (unsigned m = 0; m < FF_REGRESS_NMODELS && !e; m++) {
      const struct ff_fit *fit = &g->reg.fit[m];
      int ok = g->status == FF_OK && fit->status == FF_OK;
      if (g->status == FF_OK && !fit->attempted)
        continue;
      if (g->status != FF_OK && m > 0)
        break;
      e |= text(f, "solute", 0) | text(f, g->solute, 0)
         | text(f, g->solvent, 0)
         | text(f, g->status == FF_OK ? ff_regress_model_name(fit->model)
                : "", 0)
         | text(f, status_key(g->status == FF_OK ? fit->status : g->status),
                0)
         | num(f, ok ? fit->i_limit : NAN, 0)
         | num(f, ok ? fit->u_i_limit : NAN, 0)
         | num(f, ok ? fit->ci_limit[0] : NAN, 0)
         | num(f, ok ? fit->ci_limit[1] : NAN, 0)
         | text(f, ok && g->reg.has_preferred && g->reg.preferred == fit->model
                ? "yes" : "", 0)
         | num(f, g->particles_known ? (double)g->particles.nu : NAN, 0)
         | num(f, g->status == FF_OK && g->reg.has_particles
                  && g->reg.particles_inferred
               ? (double)g->reg.particles_inferred : NAN, 0)
         | text(f, g->status != FF_OK ? g->diag.msg
                : fit->status != FF_OK ? fit->reason : fit->note, 1);
    }
  }
  e |= fputs("\nsection,solute,solvent,status,molar_mass_g_mol,"
             "u_molar_mass_g_mol,ci95_lo,ci95_hi,method,message\n", f) < 0;
  for (size_t k = 0; k < s->n_unknowns && !e; k++) {
    const struct ff_series_unknown *g = &s->unknowns[k];
    int ok = g->status == FF_OK;
    e |= text(f, "unknown", 0) | text(f, g->solute, 0) | text(f, g->solvent, 0)
       | text(f, status_key(g->status), 0)
       | num(f, ok ? g->mm.m0_g_mol : NAN, 0)
       | num(f, ok ? g->mm.u_m0_g_mol : NAN, 0)
       | num(f, ok ? g->mm.ci[0] : NAN, 0) | num(f, ok ? g->mm.ci[1] : NAN, 0)
       | text(f, ok ? mm_method(g->mm.preferred) : "", 0)
       | text(f, ok ? g->mm.note : g->diag.msg, 1);
  }
  return e || ferror(f) ? -1 : 0;
}
