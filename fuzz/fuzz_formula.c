/* fuzz/fuzz_formula.c - libFuzzer harness: any text through the formula parser. */
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include "frostfit/formula.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static struct ff_atomic_table atoms = FF_ATOMIC_TABLE_INIT;
static int loaded;

/* The real table when run from the repository, else a few elements. */
static void load_atoms(void)
{
  static const struct ff_element few[] = {
    { "H", 1, 1.008 }, { "C", 6, 12.011 }, { "N", 7, 14.007 },
    { "O", 8, 15.999 }, { "Na", 11, 22.99 }, { "S", 16, 32.06 },
    { "Cl", 17, 35.45 }, { "Ca", 20, 40.078 }, { "Cu", 29, 63.546 },
  };
  struct ff_diag d = FF_DIAG_INIT;

  loaded = 1;
  if (ff_atomic_table_load(&atoms, "datasets/atomic_weights.csv", &d) == FF_OK)
    return;
  atoms.v = malloc(sizeof few);
  if (atoms.v == NULL)
    abort();
  memcpy(atoms.v, few, sizeof few);
  atoms.n = atoms.cap = sizeof few / sizeof few[0];
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_formula f;
  char *text;
  int st;

  if (!loaded)
    load_atoms();
  text = malloc(size + 1);
  if (text == NULL)
    return 0;
  memcpy(text, data, size);
  text[size] = '\0';
  st = ff_formula_parse(&atoms, text, &f, "sheet.csv", 7, &d);
  if (st == FF_OK) {
    /* a formula that parses weighs something finite and positive */
    if (!(f.m_g_mol > 0 && f.m_g_mol < 1e300) || !(f.m_anhydrous_g_mol >= 0))
      abort();
  } else if (d.status == FF_OK) {
    abort();                   /* failure without a reason */
  }
  free(text);
  return 0;
}
