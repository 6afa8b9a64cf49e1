/* cli/cmd_solvents.c - 'frostfit solvents': the solvent table with Kf
 * recomputed from first principles, hazards, sources and cautions. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "cli.h"
#include "frostfit/json.h"
#include "frostfit/solvent.h"

#define CMD "solvents"

static void usage(FILE *f)
{
  fputs(
"usage: frostfit solvents [--json] [--file USER.csv] [NAME]\n\n"
"Prints the solvent table: freezing point, tabulated Kf beside Kf computed\n"
"as R Tf^2 M / dH_fus (and their difference), enthalpy of fusion, molar\n"
"mass, the fraction of solvent frozen per kelvin of supercooling (cp/L),\n"
"hazards and the source of every row, then a general caution.\n\n"
"  --file USER.csv  your own rows (same columns, docs/formats/solvents.md),\n"
"                   read after the bundled table: same name replaces\n"
"                   (also spelled --solvents-file, as in 'simulate')\n"
"  --json           machine-readable output\n"
"  NAME             show one solvent (name or alias)\n"
"  --help           this text\n\n"
"exit codes: 0 ok, 1 usage error, 2 bad table or unknown name, 4 i/o error\n",
        f);
}

/* Prints text wrapped at width, every line indented by ind spaces. */
static void wrap(FILE *f, const char *text, int ind, int width)
{
  const char *p = text;

  while (*p) {
    int room = width - ind, n = (int)strlen(p);
    if (n > room) {
      n = room;
      while (n > 0 && p[n] != ' ')
        n--;
      if (n == 0)
        n = room;
    }
    fprintf(f, "%*s%.*s\n", ind, "", n, p);
    p += n;
    while (*p == ' ')
      p++;
  }
}

static void num_cell(FILE *f, int prec, double x, int w)
{
  if (isfinite(x))
    fprintf(f, "%*.*f", w, prec, x);
  else
    fprintf(f, "%*s", w, "-");
}

static void print_text(const struct ff_solvent_table *t, size_t from,
                       size_t to)
{
  printf("%-14s %8s %8s %8s %7s %9s %8s %8s\n", "solvent", "Tf/C",
         "Kf table", "Kf calc", "diff", "dH J/mol", "M g/mol", "frozen/K");
  for (size_t i = from; i < to; i++) {
    const struct ff_solvent *s = &t->v[i];
    double kc = ff_solvent_kf_calc(s), f = ff_solvent_frozen_per_k(s);
    printf("%-14s ", s->name);
    num_cell(stdout, 3, s->tf_c, 8);
    putchar(' ');
    num_cell(stdout, 3, s->kf_k_kg_mol, 8);
    putchar(' ');
    num_cell(stdout, 4, kc, 8);
    putchar(' ');
    if (isfinite(kc))
      printf("%+6.2f%%", 100.0 * (kc / s->kf_k_kg_mol - 1.0));
    else
      printf("%7s", "-");
    putchar(' ');
    num_cell(stdout, 0, s->dh_fus_j_mol, 9);
    putchar(' ');
    num_cell(stdout, 2, s->m_g_mol, 8);
    putchar(' ');
    if (isfinite(f))
      printf("%7.2f%%\n", 100.0 * f);
    else
      printf("%8s\n", "-");
  }
  printf("\nKf calc = R Tf^2 M / dH_fus (molality basis); diff = calc "
         "against table.\nfrozen/K = cp/L, the share of the solvent that "
         "freezes per kelvin of\nsupercooling (it lowers the peak after "
         "recalescence).\n");
  printf("\nhazards and sources:\n");
  for (size_t i = from; i < to; i++) {
    const struct ff_solvent *s = &t->v[i];
    printf("%s", s->name);
    if (s->aliases[0]) {
      printf(" (also: ");
      for (const char *p = s->aliases; *p; p++)
        if (*p == '|')
          printf(", ");
        else
          putchar(*p);
      putchar(')');
    }
    putchar('\n');
    if (s->hazard[0]) {
      printf("  hazard:\n");
      wrap(stdout, s->hazard, 4, 78);
    }
    if (s->source[0]) {
      printf("  source:\n");
      wrap(stdout, s->source, 4, 78);
    }
  }
  printf("\ncaution:\n");
  wrap(stdout, ff_solvent_caution(), 2, 78);
}

static int print_json(const struct ff_solvent_table *t, size_t from,
                      size_t to, const char *const *files, size_t n_files)
{
  json_t *root = json_object(), *arr = json_array(), *fl = json_array();
  int rc;

  if (root == NULL || arr == NULL || fl == NULL) {
    json_decref(root);
    json_decref(arr);
    json_decref(fl);
    return -1;
  }
  for (size_t k = 0; k < n_files; k++)
    json_array_append_new(fl, ff_json_str(files[k]));
  for (size_t i = from; i < to; i++) {
    const struct ff_solvent *s = &t->v[i];
    json_t *o = json_object(), *al = json_array();
    double kc = ff_solvent_kf_calc(s);
    const char *p = s->aliases;

    if (o == NULL || al == NULL) {
      json_decref(o);
      json_decref(al);
      break;
    }
    while (*p) {
      const char *e = strchr(p, '|');
      size_t n = e ? (size_t)(e - p) : strlen(p);
      char a[128];
      snprintf(a, sizeof a, "%.*s", (int)n, p);
      json_array_append_new(al, ff_json_str(a));
      p += n;
      if (*p == '|')
        p++;
    }
    ff_json_set_str(o, "name", s->name);
    json_object_set_new(o, "aliases", al);
    ff_json_set_num(o, "tf_c", s->tf_c);
    ff_json_set_num(o, "kf_k_kg_mol", s->kf_k_kg_mol);
    ff_json_set_num(o, "kf_calc_k_kg_mol", kc);
    ff_json_set_num(o, "kf_calc_diff_pct", 100.0 * (kc / s->kf_k_kg_mol - 1.0));
    ff_json_set_num(o, "dh_fus_j_mol", s->dh_fus_j_mol);
    ff_json_set_num(o, "m_g_mol", s->m_g_mol);
    ff_json_set_num(o, "cp_liq_j_g_k", s->cp_liq_j_g_k);
    ff_json_set_num(o, "cp_sol_j_g_k", s->cp_sol_j_g_k);
    ff_json_set_num(o, "frozen_fraction_per_k", ff_solvent_frozen_per_k(s));
    ff_json_set_str(o, "hazard", s->hazard);
    ff_json_set_str(o, "source", s->source);
    json_array_append_new(arr, o);
  }
  json_object_set_new(root, "files", fl);
  json_object_set_new(root, "solvents", arr);
  ff_json_set_str(root, "caution", ff_solvent_caution());
  rc = ff_json_write(root, stdout);
  json_decref(root);
  return rc;
}

int ff_cmd_solvents(int argc, char **argv)
{
  struct ff_solvent_table t = FF_SOLVENT_TABLE_INIT;
  struct ff_diag d = FF_DIAG_INIT;
  const char *user = NULL, *name = NULL, *files[2];
  char path[4096];
  size_t from = 0, to, n_files = 1;
  int json = 0;

  for (int a = 1; a < argc; a++) {
    const char *arg = argv[a];
    if (strcmp(arg, "--help") == 0 || strcmp(arg, "-h") == 0) {
      usage(stdout);
      return ff_cli_finish(FF_OK);
    } else if (strcmp(arg, "--json") == 0) {
      json = 1;
    } else if (strcmp(arg, "--file") == 0 ||
               strcmp(arg, "--solvents-file") == 0) {
      if (a + 1 >= argc)
        return ff_cli_usage(CMD, "%s needs a value", arg);
      user = argv[++a];
    } else if (strncmp(arg, "--file=", 7) == 0) {
      user = arg + 7;
    } else if (strncmp(arg, "--solvents-file=", 16) == 0) {
      user = arg + 16;
    } else if (arg[0] == '-' && arg[1] != '\0') {
      return ff_cli_usage(CMD, "unknown option '%s'", arg);
    } else if (name == NULL) {
      name = arg;
    } else {
      return ff_cli_usage(CMD, "unexpected argument '%s'", arg);
    }
  }
  snprintf(path, sizeof path, "%s/solvents.csv", ff_cli_datadir());
  files[0] = path;
  if (ff_solvent_table_load(&t, path, &d) != FF_OK)
    return ff_cli_fail(&d);
  if (user != NULL) {
    files[n_files++] = user;
    if (ff_solvent_table_load(&t, user, &d) != FF_OK) {
      ff_solvent_table_release(&t);
      return ff_cli_fail(&d);
    }
  }
  to = t.n;
  if (name != NULL) {
    const struct ff_solvent *s = ff_solvent_find(&t, name);
    if (s == NULL) {
      ff_cli_msg("unknown solvent '%s'; 'frostfit solvents' lists them",
                 name);
      ff_solvent_table_release(&t);
      return FF_EINPUT;
    }
    from = (size_t)(s - t.v);
    to = from + 1;
  }
  if (json) {
    if (print_json(&t, from, to, files, n_files) != 0) {
      ff_solvent_table_release(&t);
      ff_cli_msg("cannot write the output");
      return FF_EIO;
    }
  } else {
    print_text(&t, from, to);
  }
  ff_solvent_table_release(&t);
  return ff_cli_finish(FF_OK);
}
