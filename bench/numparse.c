/* bench/numparse.c - nanoseconds per CSV cell: strtod against ff_parse_double. Prints figures only. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include "frostfit/numparse.h"

#define N_CELLS 1000000u
#define ROUNDS 5u            /* best of: the machine is shared */

struct cells {
  char *text;                /* cells one after another, each NUL-ended */
  size_t *off, *len;
  size_t n;
};

static double now_s(void)
{
  struct timespec ts;
  clock_gettime(CLOCK_MONOTONIC, &ts);
  return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* A small fixed generator so every run times the same text. */
static unsigned long lcg(unsigned long *s)
{
  *s = *s * 6364136223846793005UL + 1442695040888963407UL;
  return *s >> 33;
}

/* Logger-style cells: "-1.2345", "23.4567", "1234.5" and their kin. */
static int make_cells(struct cells *c, char mark)
{
  unsigned long seed = 42;
  size_t cap = (size_t)N_CELLS * 16, used = 0;

  c->text = malloc(cap);
  c->off = malloc(N_CELLS * sizeof *c->off);
  c->len = malloc(N_CELLS * sizeof *c->len);
  if (c->text == NULL || c->off == NULL || c->len == NULL)
    return -1;
  for (size_t i = 0; i < N_CELLS; i++) {
    int n;
    unsigned long v = lcg(&seed);
    switch (i % 3) {
    case 0: n = sprintf(c->text + used, "-%lu%c%04lu", v % 10, mark, v % 10000); break;
    case 1: n = sprintf(c->text + used, "%lu%c%04lu", 10 + v % 90, mark, (v >> 7) % 10000); break;
    default: n = sprintf(c->text + used, "%lu%c%lu", 1000 + v % 9000, mark, (v >> 5) % 10); break;
    }
    c->off[i] = used;
    c->len[i] = (size_t)n;
    used += (size_t)n + 1;
  }
  c->n = N_CELLS;
  return 0;
}

static void free_cells(struct cells *c)
{
  free(c->text);
  free(c->off);
  free(c->len);
}

static double time_strtod(const struct cells *c, double *sum)
{
  double best = 1e30;
  for (unsigned r = 0; r < ROUNDS; r++) {
    double t0 = now_s(), s = 0;
    for (size_t i = 0; i < c->n; i++) {
      char *end;
      s += strtod(c->text + c->off[i], &end);
    }
    double t = now_s() - t0;
    if (t < best)
      best = t;
    *sum = s;
  }
  return best;
}

static double time_ff(const struct cells *c, char mark, double *sum)
{
  double best = 1e30;
  for (unsigned r = 0; r < ROUNDS; r++) {
    double t0 = now_s(), s = 0, v = 0;
    for (size_t i = 0; i < c->n; i++) {
      if (ff_parse_double(c->text + c->off[i], c->len[i], mark, &v) == FF_NUM_OK)
        s += v;
    }
    double t = now_s() - t0;
    if (t < best)
      best = t;
    *sum = s;
  }
  return best;
}

int main(void)
{
  struct cells dot = { 0 }, comma = { 0 };
  double s1 = 0, s2 = 0, s3 = 0;

  if (make_cells(&dot, '.') != 0 || make_cells(&comma, ',') != 0) {
    fputs("bench-numparse: out of memory\n", stderr);
    return 4;
  }
  double t_strtod = time_strtod(&dot, &s1);
  double t_ff = time_ff(&dot, '.', &s2);
  double t_ffc = time_ff(&comma, ',', &s3);
  double ns = 1e9 / (double)dot.n;

  printf("number parsing, %u logger cells (\"-1.2345\", \"23.4567\", \"1234.5\"), best of %u\n",
         N_CELLS, ROUNDS);
  printf("  strtod (C locale)            %6.1f ns/cell\n", t_strtod * ns);
  printf("  ff_parse_double, '.' mark    %6.1f ns/cell  (%.1fx faster)\n",
         t_ff * ns, t_strtod / t_ff);
  printf("  ff_parse_double, ',' mark    %6.1f ns/cell\n", t_ffc * ns);
  /* Sums differ only if a result differs: print them as a cross-check. */
  printf("  checksums: strtod %.6f, ff '.' %.6f, ff ',' %.6f\n", s1, s2, s3);
  free_cells(&dot);
  free_cells(&comma);
  return 0;
}
