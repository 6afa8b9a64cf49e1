/* test_formula.c - formula weights against published molar masses; parser errors. */
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <unistd.h>

#include <criterion/criterion.h>

#include "frostfit/formula.h"

#define WEIGHTS "datasets/atomic_weights.csv"

static struct ff_atomic_table tab = FF_ATOMIC_TABLE_INIT;

static void load(void)
{
  struct ff_diag d = FF_DIAG_INIT;

  cr_assert_eq(ff_atomic_table_load(&tab, WEIGHTS, &d), FF_OK, "%s", d.msg);
}

static void unload(void)
{
  ff_atomic_table_release(&tab);
}

static struct ff_formula weigh(const char *text)
{
  struct ff_formula f;
  struct ff_diag d = FF_DIAG_INIT;

  cr_assert_eq(ff_formula_parse(&tab, text, &f, NULL, 0, &d), FF_OK,
               "%s: %s", text, d.msg);
  return f;
}

/*
 * Tolerance from the rounding of the abridged atomic weights: each atom
 * can be off by half a unit in the last tabulated digit, and the
 * published molar mass by half its own last digit. Both bounds are summed.
 */
static void expect_mass(const char *text, double want, double want_half_ulp,
                        double atoms_rounding)
{
  struct ff_formula f = weigh(text);
  double tol = want_half_ulp + atoms_rounding;

  cr_expect(fabs(f.m_g_mol - want) <= tol, "%s: got %.4f g/mol, want %.4f "
            "+- %.4f", text, f.m_g_mol, want, tol);
}

Test(formula, table_has_the_common_elements, .init = load, .fini = unload)
{
  const char *need[] = { "H", "C", "N", "O", "Na", "Mg", "Cl", "K", "Ca", "S",
                         "Cu", "Br", "I", "Ag", "Ba", "Pb", "Sr", "Zn", "Fe",
                         "Ni", "Co", "Mn", "Cr", "Al", "Si", "P", "Li", "B",
                         "F" };
  for (size_t i = 0; i < sizeof need / sizeof need[0]; i++)
    cr_expect_not_null(ff_atomic_find(&tab, need[i], strlen(need[i])),
                       "%s missing", need[i]);
  /* 55 of the first 56 elements (Tc has no standard atomic weight). */
  size_t first56 = 0;
  for (size_t i = 0; i < tab.n; i++)
    first56 += tab.v[i].z <= 56;
  cr_expect_eq(first56, 55);
  /* Conventional values, IUPAC CIAAW abridged table (2021), from memory. */
  cr_expect_float_eq(ff_atomic_find(&tab, "Cl", 2)->w_g_mol, 35.45, 1e-9);
  cr_expect_float_eq(ff_atomic_find(&tab, "Cu", 2)->w_g_mol, 63.546, 1e-9);
}

Test(formula, published_molar_masses, .init = load, .fini = unload)
{
  /* NaCl 58.443 g/mol: the value behind USP <785> table arithmetic in
   * shared/REFERENCES.md section 2.2, from memory. Cl's conventional
   * 35.45 covers an interval of +-0.006 (IUPAC), hence 0.006. */
  expect_mass("NaCl", 58.443, 0.0005, 0.006);
  /* Sucrose C12H22O11 342.30 g/mol, handbook value, from memory. */
  expect_mass("C12H22O11", 342.30, 0.005, 0.003);
  /* Copper(II) sulfate pentahydrate 249.68 g/mol, handbook, from memory. */
  expect_mass("CuSO4*5H2O", 249.68, 0.005, 0.005);
  /* Urea CO(NH2)2 60.06 g/mol, handbook, from memory. */
  expect_mass("CO(NH2)2", 60.06, 0.005, 0.002);
  expect_mass("CH4N2O", 60.06, 0.005, 0.002);
  /* Benzoic acid C6H5COOH 122.12 g/mol (REFERENCES section 1.4 [M]),
   * from memory. */
  expect_mass("C6H5COOH", 122.12, 0.005, 0.002);
  /* Glucose C6H12O6 180.16 g/mol, handbook, from memory. */
  expect_mass("C6H12O6", 180.16, 0.005, 0.002);
  /* Magnesium sulfate heptahydrate 246.47 g/mol, handbook, from memory. */
  expect_mass("MgSO4.7H2O", 246.47, 0.005, 0.008);
  /* Potassium ferrocyanide K4[Fe(CN)6] 368.35 g/mol, handbook, from
   * memory: nested brackets. */
  expect_mass("K4[Fe(CN)6]", 368.35, 0.005, 0.006);
}

Test(formula, hydrate_waters_are_separated, .init = load, .fini = unload)
{
  /* All three dots give the same result: '*', '.', U+00B7 in UTF-8 and in
   * Latin-1. */
  const char *forms[] = { "CuSO4*5H2O", "CuSO4.5H2O", "CuSO4\xC2\xB7" "5H2O",
                          "CuSO4\xB7" "5H2O", "CuSO4 * 5 H2O" };
  struct ff_formula ref = weigh("CuSO4");
  for (size_t i = 0; i < sizeof forms / sizeof forms[0]; i++) {
    struct ff_formula f = weigh(forms[i]);
    cr_expect_float_eq(f.hydrate_waters, 5.0, 1e-12, "%s", forms[i]);
    cr_expect_float_eq(f.m_anhydrous_g_mol, ref.m_g_mol, 1e-9, "%s", forms[i]);
    cr_expect_float_eq(f.m_g_mol - f.m_anhydrous_g_mol, 5.0 * f.m_water_g_mol,
                       1e-9, "%s", forms[i]);
  }
  /* Hemihydrate: decimal coefficient after the dot. */
  struct ff_formula h = weigh("CaSO4*0.5H2O");
  cr_expect_float_eq(h.hydrate_waters, 0.5, 1e-12);
  /* An adduct that is not water stays in the anhydrous mass. */
  struct ff_formula a = weigh("Na2CO3*H2O2");
  cr_expect_float_eq(a.hydrate_waters, 0.0, 1e-12);
  cr_expect_float_eq(a.m_anhydrous_g_mol, a.m_g_mol, 1e-12);
  /* Water alone is not a hydrate. */
  cr_expect_float_eq(weigh("H2O").hydrate_waters, 0.0, 1e-12);
}

Test(formula, charge_suffix, .init = load, .fini = unload)
{
  cr_expect_eq(weigh("SO4^2-").charge, -2);
  cr_expect_eq(weigh("NH4^+").charge, 1);
  cr_expect_eq(weigh("[Fe(CN)6]^4-").charge, -4);
  cr_expect_eq(weigh("NaCl").charge, 0);
  cr_expect_eq(weigh("C12H22O11").n_elements, 3);
}

static void expect_error(const char *text, unsigned long col, const char *bit)
{
  struct ff_formula f;
  struct ff_diag d = FF_DIAG_INIT;

  cr_expect_eq(ff_formula_parse(&tab, text, &f, "sheet.csv", 7, &d),
               FF_EINPUT, "%s accepted", text);
  cr_expect_eq(d.col, col, "%s: col %lu, want %lu (%s)", text, d.col, col,
               d.msg);
  cr_expect_eq(d.line, 7);
  cr_expect_str_eq(d.path, "sheet.csv");
  cr_expect(strstr(d.msg, bit) != NULL, "%s: message '%s' lacks '%s'", text,
            d.msg, bit);
  cr_expect(isnan(f.m_g_mol), "%s: a mass came out of a failed parse", text);
}

Test(formula, errors_name_position_and_text, .init = load, .fini = unload)
{
  expect_error("NaXx", 3, "'Xx'");
  expect_error("Ca(OH2", 3, "unbalanced '('");
  expect_error("CaOH)2", 5, "unbalanced ')'");
  expect_error("K4[Fe(CN)6)", 11, "unbalanced");
  expect_error("", 1, "empty formula");
  expect_error("   ", 4, "empty formula");
  expect_error("Na()Cl", 4, "empty brackets");
  expect_error("H0O", 2, "'0'");
  expect_error("C9999999", 2, "'9999999'");
  expect_error("CuSO4*", 6, "nothing after");
  expect_error("h2o", 1, "capital");
  expect_error("Na+", 3, "SO4^2-");
  expect_error("CuSO4*5", 7, "without a formula");
  expect_error("NaCl#", 5, "'#'");
  /* Columns count characters: the UTF-8 middle dot is one. */
  expect_error("CuSO4\xC2\xB7" "5Qq", 8, "'Qq'");
}

Test(formula, loader_reports_bad_cells)
{
  char path[] = "/tmp/ff_aw_XXXXXX";
  int fd = mkstemp(path);
  cr_assert(fd >= 0);
  FILE *f = fdopen(fd, "w");
  fputs("# test\nsymbol,z,weight_g_mol,source\nH,1,1.008,x\nO,8,15.x99,x\n",
        f);
  fclose(f);
  struct ff_atomic_table t = FF_ATOMIC_TABLE_INIT;
  struct ff_diag d = FF_DIAG_INIT;
  cr_expect_eq(ff_atomic_table_load(&t, path, &d), FF_EINPUT);
  cr_expect_eq(d.line, 4);
  cr_expect_eq(d.col, 3);
  cr_expect(strstr(d.msg, "15.x99") != NULL, "%s", d.msg);
  cr_expect_eq(t.n, 0, "a failed load must leave the table as it was");
  ff_diag_clear(&d);
  cr_expect_eq(ff_atomic_table_load(&t, "/nonexistent/aw.csv", &d), FF_EIO);
  ff_atomic_table_release(&t);
  unlink(path);
}

Test(formula, random_text_never_crashes, .init = load, .fini = unload)
{
  /* Random strings over the formula alphabet plus junk: every parse either
   * succeeds with a finite positive mass or fails with a column inside
   * the text (run under the sanitizers to catch overruns). */
  static const char alpha[] = "HCNOSPKClNaCuFe()[]{}*.0123456789^+- xh\xb7";
  unsigned long seed = 12345;
  char text[24];
  for (int k = 0; k < 20000; k++) {
    size_t n = (size_t)(seed % 20);
    for (size_t j = 0; j < n; j++) {
      seed = seed * 6364136223846793005UL + 1442695040888963407UL;
      text[j] = alpha[(seed >> 33) % (sizeof alpha - 1)];
    }
    text[n] = '\0';
    seed = seed * 6364136223846793005UL + 1442695040888963407UL;
    struct ff_formula f;
    struct ff_diag d = FF_DIAG_INIT;
    int rc = ff_formula_parse(&tab, text, &f, NULL, 0, &d);
    if (rc == FF_OK)
      cr_assert(isfinite(f.m_g_mol) && f.m_g_mol > 0, "'%s'", text);
    else
      cr_assert(rc == FF_EINPUT && d.col >= 1 && d.col <= n + 1,
                "'%s': rc %d col %lu", text, rc, d.col);
  }
}
