/* plot_impl.h - private parts of the plot stage shared by src/plot_*.c. */
#ifndef FF_PLOT_IMPL_H
#define FF_PLOT_IMPL_H

#include <stdio.h>
#include "frostfit/plot.h"

#define FF_PLOT_STEM_MAX 96    /* file stem length, suffix included */

struct ff_plot_set {
  char *dir;                   /* output folder, as given */
  unsigned formats;            /* FF_PLOT_* bits */
  char *style;                 /* style text inlined into every script */
  char *gnuplot;               /* program name or path; owned */
  int no_render;
  void (*progress)(void *ctx, const char *stage, size_t done, size_t total);
  void *progress_ctx;
  char (*stems)[FF_PLOT_STEM_MAX];     /* figures written, in order */
  size_t n, cap;
};

/* The built-in copy of plots/style.gp (plot_style.c). */
extern const char ff_plot_style_builtin[];

/* "png svg pdf" for the bits set, into out (size n). */
const char *ff_plot_formats_words(unsigned formats, char *out, size_t n);

/*
 * Reserves a unique sanitised stem for a new figure (adds "_2", "_3"...
 * on collision) into stem. FF_EIO in d when out of memory.
 */
int ff_plot_set_claim(struct ff_plot_set *s, const char *name,
                      char stem[FF_PLOT_STEM_MAX], struct ff_diag *d);

/* A text being built in memory (open_memstream), then written atomically. */
struct ff_plot_buf {
  FILE *f;
  char *text;
  size_t len;
};
int ff_plot_buf_open(struct ff_plot_buf *b, struct ff_diag *d);
/* Closes the stream and writes dir/name atomically; always frees. */
int ff_plot_buf_commit(struct ff_plot_buf *b, const char *dir,
                       const char *name, struct ff_diag *d);
void ff_plot_buf_discard(struct ff_plot_buf *b);

/* dir/name in a new malloc'd string; NULL when out of memory. */
char *ff_plot_join(const char *dir, const char *name);

/* Creates dir and its parents (mode 0777 & ~umask). FF_EIO in d. */
int ff_plot_mkdirs(const char *dir, struct ff_diag *d);

#endif /* FF_PLOT_IMPL_H */
