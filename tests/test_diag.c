/* test_diag.c - the error record: first error wins, formatting. */
#include <criterion/criterion.h>
#include "frostfit/diag.h"

Test(diag, keeps_first_error_and_formats_location)
{
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_loc at = { "run3.csv", 14, 2 };
  char buf[600];

  cr_assert_eq(ff_diag_set(&d, FF_EINPUT, &at, "expected a number, found '%s'",
                           "21..4"), FF_EINPUT);
  ff_diag_set(&d, FF_EIO, NULL, "later error");
  cr_assert_eq(d.status, FF_EINPUT);
  cr_assert_str_eq(ff_diag_format(&d, buf, sizeof buf),
                   "run3.csv:14:2: expected a number, found '21..4'");
}

Test(diag, formats_without_location)
{
  struct ff_diag d = FF_DIAG_INIT;
  char buf[600];

  ff_diag_set(&d, FF_EUNTRUSTED, NULL, "no freeze event");
  cr_assert_str_eq(ff_diag_format(&d, buf, sizeof buf), "no freeze event");
}
