/* cli/progress.c - a progress bar on stderr for long work, terminals only. */
#include <stdio.h>
#include <time.h>
#include <unistd.h>

#include "cli.h"

#define BAR_WIDTH 30
#define MIN_INTERVAL_S 0.1

static double now_s(void)
{
  struct timespec ts;

  clock_gettime(CLOCK_MONOTONIC, &ts);
  return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

void ff_cli_progress_init(struct ff_cli_progress *p, const char *label,
                          int quiet)
{
  p->label = label;
  /* Nothing extra when stderr is a file or a pipe: logs stay clean. */
  p->on = !quiet && isatty(STDERR_FILENO);
  p->shown = 0;
  p->last_s = 0.0;
}

static void draw(struct ff_cli_progress *p, const char *what, double frac,
                 const char *count)
{
  char bar[BAR_WIDTH + 1];
  int fill = frac >= 0.0 ? (int)(frac * BAR_WIDTH + 0.5) : 0;

  for (int i = 0; i < BAR_WIDTH; i++)
    bar[i] = i < fill ? '#' : '.';
  bar[BAR_WIDTH] = '\0';
  fprintf(stderr, "\rfrostfit: %s %s [%s] %s\033[K", p->label, what, bar,
          count);
  fflush(stderr);
  p->shown = 1;
}

/* Throttled: at most ten redraws a second, and always the last one. */
static int due(struct ff_cli_progress *p, int last)
{
  double t;

  if (!p->on)
    return 0;
  t = now_s();
  if (!last && t - p->last_s < MIN_INTERVAL_S)
    return 0;
  p->last_s = t;
  return 1;
}

void ff_cli_progress_bytes(void *ctx, unsigned long long done,
                           unsigned long long total)
{
  struct ff_cli_progress *p = ctx;
  char count[64];

  if (!due(p, total > 0 && done >= total))
    return;
  if (total > 0) {
    snprintf(count, sizeof count, "%3.0f %% of %.0f MB",
             100.0 * (double)done / (double)total, (double)total / 1e6);
    draw(p, "reading", (double)done / (double)total, count);
  } else {
    snprintf(count, sizeof count, "%.0f MB", (double)done / 1e6);
    draw(p, "reading", -1.0, count);
  }
}

void ff_cli_progress_items(void *ctx, const char *stage, size_t done,
                           size_t total)
{
  struct ff_cli_progress *p = ctx;
  char count[64];

  if (!due(p, done >= total))
    return;
  snprintf(count, sizeof count, "%zu / %zu", done, total);
  draw(p, stage, total ? (double)done / (double)total : 1.0, count);
}

void ff_cli_progress_end(struct ff_cli_progress *p)
{
  if (p->on && p->shown) {
    fputs("\r\033[K", stderr);
    fflush(stderr);
  }
  p->shown = 0;
}
