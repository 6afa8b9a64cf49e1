/* fuzz/fuzz_numparse.c - differential libFuzzer harness: ff_parse_double against strtod. */
#include <errno.h>
#include <math.h>
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include "frostfit/numparse.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

/*
 * First byte: the decimal mark ('.' unless it is ','); the rest is the cell.
 * Whatever ff_parse_double accepts, strtod (C locale: nothing here calls
 * setlocale) must read to the end with the same bits and the same range
 * verdict.
 */
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
  char mark, *text, *end;
  double got = 0, want;
  uint64_t a, b;
  size_t n;
  int st;

  if (size == 0)
    return 0;
  mark = data[0] == ',' ? ',' : '.';
  n = size - 1;
  st = ff_parse_double((const char *)data + 1, n, mark, &got);
  if (st != FF_NUM_OK && st != FF_NUM_RANGE)
    return 0;
  text = malloc(n + 1);
  if (text == NULL)
    return 0;
  memcpy(text, data + 1, n);
  text[n] = '\0';
  for (size_t i = 0; i < n; i++)
    if (text[i] == mark)
      text[i] = '.';
  /* strtod skips leading blanks itself; drop trailing ones for it */
  while (n > 0 && (text[n - 1] == ' ' || text[n - 1] == '\t'))
    text[--n] = '\0';
  errno = 0;
  want = strtod(text, &end);
  if (*end != '\0')
    abort();                   /* accepted text strtod does not read whole */
  if ((st == FF_NUM_RANGE) != (errno == ERANGE && fabs(want) > 1.0))
    abort();                   /* different range verdict */
  memcpy(&a, &got, sizeof a);
  memcpy(&b, &want, sizeof b);
  if (a != b)
    abort();                   /* different bits */
  free(text);
  return 0;
}
