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

#endif /* FF_PARALLEL_H */
