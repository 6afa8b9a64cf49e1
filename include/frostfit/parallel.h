/* frostfit/parallel.h - a small worker pool shared by the stages' drivers. */
#ifndef FF_PARALLEL_H
#define FF_PARALLEL_H

#include <stddef.h>

/*
 * Calls fn(ctx, i) once for every i in [0, n), on min(n, online CPUs)
 * threads, the caller being one of them; returns when all are done. Items
 * are handed out in order, one at a time. fn must touch only item i's own
 * results (and read shared data), so the results do not depend on which
 * thread ran an item or when. A thread that cannot be started leaves its
 * share to the others.
 */
void ff_parallel_for(size_t n, void (*fn)(void *ctx, size_t i), void *ctx);

/*
 * The same, and after each item progress(pctx, done, n) is called with the
 * count finished so far; the calls never overlap (one at a time, under the
 * pool's lock), so progress needs no locking of its own. progress may be
 * NULL.
 */
void ff_parallel_for_progress(size_t n, void (*fn)(void *ctx, size_t i),
                              void *ctx,
                              void (*progress)(void *pctx, size_t done,
                                               size_t total),
                              void *pctx);

#endif /* FF_PARALLEL_H */
