/* parallel.c - the worker pool behind point's channels and series' runs. */
#include "frostfit/parallel.h"

#include <pthread.h>
#include <unistd.h>

#define MAX_THREADS 64

struct pool {
  void (*fn)(void *ctx, size_t i);
  void *ctx;
  void (*progress)(void *pctx, size_t done, size_t total);
  void *pctx;
  size_t n, next, done;
  pthread_mutex_t lock;
};

static void *pool_worker(void *arg)
{
  struct pool *pl = arg;

  for (;;) {
    size_t i;
    pthread_mutex_lock(&pl->lock);
    i = pl->next++;
    pthread_mutex_unlock(&pl->lock);
    if (i >= pl->n)
      return NULL;
    pl->fn(pl->ctx, i);
    if (pl->progress != NULL) {
      pthread_mutex_lock(&pl->lock);
      pl->progress(pl->pctx, ++pl->done, pl->n);
      pthread_mutex_unlock(&pl->lock);
    }
  }
}

void ff_parallel_for(size_t n, void (*fn)(void *ctx, size_t i), void *ctx)
{
  ff_parallel_for_progress(n, fn, ctx, NULL, NULL);
}

void ff_parallel_for_progress(size_t n, void (*fn)(void *ctx, size_t i),
                              void *ctx,
                              void (*progress)(void *pctx, size_t done,
                                               size_t total),
                              void *pctx)
{
  struct pool pl = { .fn = fn, .ctx = ctx, .progress = progress,
                     .pctx = pctx, .n = n };
  pthread_t th[MAX_THREADS];
  long cpus = sysconf(_SC_NPROCESSORS_ONLN);
  size_t nth = cpus > 1 ? (size_t)cpus : 1, started = 0;

  if (nth > n)
    nth = n;
  if (nth > MAX_THREADS)
    nth = MAX_THREADS;
  pthread_mutex_init(&pl.lock, NULL);
  for (size_t i = 1; i < nth; i++)
    if (pthread_create(&th[started], NULL, pool_worker, &pl) == 0)
      started++;
  pool_worker(&pl);
  for (size_t i = 0; i < started; i++)
    pthread_join(th[i], NULL);
  pthread_mutex_destroy(&pl.lock);
}
