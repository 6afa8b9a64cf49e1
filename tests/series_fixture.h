/* series_fixture.h - for the series test files: a run sheet read, checked
 * and run through the series stage with the bundled tables, and its runs
 * found by id. Header-only (static inline) so each test file takes what it
 * uses. */
#ifndef FF_TEST_SERIES_FIXTURE_H
#define FF_TEST_SERIES_FIXTURE_H

#include <string.h>
#include <criterion/criterion.h>
#include <gsl/gsl_errno.h>

#include "frostfit/series.h"

struct fixture {
  struct ff_solvent_table t;
  struct ff_atomic_table at;
  struct ff_sheet sh;
  struct ff_series s;
  int status;
  struct ff_diag d;
};

/*
 * Loads datasets/solvents.csv, datasets/atomic_weights.csv and sheet, and
 * runs the series with o (its tables are set here). strict: the sheet must
 * read and check without a problem; otherwise it need only have rows (bad
 * rows are what some tests are about).
 */
static inline void fixture_load(struct fixture *f, const char *sheet,
                                struct ff_series_opts o, int strict)
{
  struct ff_diag d = FF_DIAG_INIT;
  int read_st, check_st;

  gsl_set_error_handler_off();
  memset(f, 0, sizeof *f);
  f->sh = (struct ff_sheet)FF_SHEET_INIT;
  cr_assert_eq(ff_solvent_table_load(&f->t, "datasets/solvents.csv", &d),
               FF_OK, "%s", d.msg);
  cr_assert_eq(ff_atomic_table_load(&f->at, "datasets/atomic_weights.csv",
                                    &d), FF_OK, "%s", d.msg);
  read_st = ff_sheet_read(sheet, &f->sh, &d);
  if (strict)
    cr_assert_eq(read_st, FF_OK, "%s", d.msg);
  else
    cr_assert_gt(f->sh.n, 0, "%s", d.msg);
  check_st = ff_sheet_check(&f->sh, &f->t, &f->at, &d);
  if (strict)
    cr_assert_eq(check_st, FF_OK, "%s", d.msg);
  o.solvents = &f->t;
  o.atoms = &f->at;
  f->status = ff_series_run(&f->sh, &o, &f->s, &f->d);
}

static inline void unload(struct fixture *f)
{
  ff_series_release(&f->s);
  ff_sheet_release(&f->sh);
  ff_solvent_table_release(&f->t);
  ff_atomic_table_release(&f->at);
}

/* The run with sheet id id; the test fails when there is none. */
static inline const struct ff_series_run *fixture_run(const struct fixture *f,
                                                      const char *id)
{
  for (size_t k = 0; k < f->s.n_runs; k++)
    if (strcmp(f->sh.row[f->s.runs[k].row].run, id) == 0)
      return &f->s.runs[k];
  cr_assert_fail("no run %s", id);
  return NULL;
}

#endif /* FF_TEST_SERIES_FIXTURE_H */
