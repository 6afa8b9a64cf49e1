/* plot_io.c - plot stage: figure sets, folders, atomic writes, finding gnuplot. */
#include <errno.h>
#include <signal.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include <sys/stat.h>
#include <sys/types.h>
#include "frostfit/plot.h"
#include "plot_impl.h"

#define STYLE_MAX (256 * 1024)  /* a style file larger than this is a mistake */

int ff_plot_mkdirs(const char *dir, struct ff_diag *d)
{
  char *p, *path = strdup(dir);
  struct stat st;

  if (path == NULL)
    return ff_diag_set(d, FF_EIO, NULL, "out of memory");
  for (p = path + 1; ; p++) {
    if (*p == '/' || *p == '\0') {
      char saved = *p;

      *p = '\0';
      if (mkdir(path, 0777) != 0 && errno != EEXIST) {
        ff_diag_set(d, FF_EIO, NULL, "cannot create folder '%s': %s", path,
                    strerror(errno));
        free(path);
        return FF_EIO;
      }
      *p = saved;
      if (saved == '\0')
        break;
    }
  }
  free(path);
  if (stat(dir, &st) != 0 || !S_ISDIR(st.st_mode))
    return ff_diag_set(d, FF_EIO, NULL, "'%s' is not a folder", dir);
  return FF_OK;
}

char *ff_plot_join(const char *dir, const char *name)
{
  size_t a = strlen(dir), b = strlen(name);
  char *p = malloc(a + b + 2);

  if (p != NULL) {
    memcpy(p, dir, a);
    p[a] = '/';
    memcpy(p + a + 1, name, b + 1);
  }
  return p;
}

int ff_plot_write_atomic(const char *dir, const char *name, const void *data,
                         size_t len, struct ff_diag *d)
{
  char *final = ff_plot_join(dir, name);
  char *tmp = ff_plot_join(dir, ".ff-tmp.XXXXXX");
  const char *p = data;
  sigset_t hold, old;
  int fd, err = 0;

  if (final == NULL || tmp == NULL) {
    free(final);
    free(tmp);
    return ff_diag_set(d, FF_EIO, NULL, "out of memory");
  }
  /* Ctrl-C, kill, hangup and quit wait while the temporary file exists,
   * so none is left behind; they take effect once it is renamed or gone. */
  sigemptyset(&hold);
  sigaddset(&hold, SIGINT);
  sigaddset(&hold, SIGTERM);
  sigaddset(&hold, SIGHUP);
  sigaddset(&hold, SIGQUIT);
  sigprocmask(SIG_BLOCK, &hold, &old);
  fd = mkstemp(tmp);
  if (fd < 0) {
    ff_diag_set(d, FF_EIO, NULL, "cannot write in '%s': %s", dir,
                strerror(errno));
    sigprocmask(SIG_SETMASK, &old, NULL);
    free(final);
    free(tmp);
    return FF_EIO;
  }
  while (len > 0 && err == 0) {
    ssize_t w = write(fd, p, len);

    if (w < 0 && errno == EINTR)
      continue;
    if (w <= 0)
      err = w < 0 ? errno : EIO;
    else {
      p += w;
      len -= (size_t)w;
    }
  }
  /* mkstemp makes 0600; figures are ordinary documents. */
  if (err == 0 && fchmod(fd, 0644) != 0)
    err = errno;
  if (close(fd) != 0 && err == 0)
    err = errno;
  if (err == 0 && rename(tmp, final) != 0)
    err = errno;
  if (err != 0)
    unlink(tmp);
  sigprocmask(SIG_SETMASK, &old, NULL);
  if (err != 0)
    ff_diag_set(d, FF_EIO, NULL, "cannot write '%s': %s", final,
                strerror(err));
  free(final);
  free(tmp);
  return err != 0 ? FF_EIO : FF_OK;
}

int ff_plot_buf_open(struct ff_plot_buf *b, struct ff_diag *d)
{
  b->text = NULL;
  b->len = 0;
  b->f = open_memstream(&b->text, &b->len);
  if (b->f == NULL)
    return ff_diag_set(d, FF_EIO, NULL, "out of memory");
  return FF_OK;
}

void ff_plot_buf_discard(struct ff_plot_buf *b)
{
  if (b->f != NULL)
    fclose(b->f);
  free(b->text);
  b->f = NULL;
  b->text = NULL;
  b->len = 0;
}

int ff_plot_buf_commit(struct ff_plot_buf *b, const char *dir,
                       const char *name, struct ff_diag *d)
{
  int bad = ferror(b->f);
  int st;

  if (fclose(b->f) != 0 || bad) {
    b->f = NULL;
    ff_plot_buf_discard(b);
    return ff_diag_set(d, FF_EIO, NULL, "out of memory writing '%s'", name);
  }
  b->f = NULL;
  st = ff_plot_write_atomic(dir, name, b->text, b->len, d);
  ff_plot_buf_discard(b);
  return st;
}

/* Reads a whole small text file; NULL with errno set on failure. */
static char *slurp(const char *path)
{
  FILE *f = fopen(path, "rb");
  char *text;
  size_t n;

  if (f == NULL)
    return NULL;
  text = malloc(STYLE_MAX + 1);
  if (text == NULL) {
    fclose(f);
    return NULL;
  }
  n = fread(text, 1, STYLE_MAX + 1, f);
  if (ferror(f) || n > STYLE_MAX) {
    int e = ferror(f) ? EIO : EFBIG;

    fclose(f);
    free(text);
    errno = e;
    return NULL;
  }
  fclose(f);
  text[n] = '\0';
  return text;
}

struct ff_plot_set *ff_plot_set_new(const char *out_dir,
                                    const struct ff_plot_opts *o,
                                    struct ff_diag *d)
{
  static const struct ff_plot_opts defaults = FF_PLOT_OPTS_DEFAULT;
  struct ff_plot_set *s;

  if (o == NULL)
    o = &defaults;
  if (out_dir == NULL || out_dir[0] == '\0') {
    ff_diag_set(d, FF_EUSAGE, NULL, "no folder given for the figures");
    return NULL;
  }
  if (strpbrk(out_dir, "\n\r") != NULL) {
    ff_diag_set(d, FF_EUSAGE, NULL, "figure folder name has a line break");
    return NULL;
  }
  if ((o->formats & ~(unsigned)FF_PLOT_FORMATS_ALL) != 0) {
    ff_diag_set(d, FF_EUSAGE, NULL, "unknown figure format bits 0x%x",
                o->formats);
    return NULL;
  }
  if (ff_plot_mkdirs(out_dir, d) != FF_OK)
    return NULL;
  s = calloc(1, sizeof *s);
  if (s == NULL) {
    ff_diag_set(d, FF_EIO, NULL, "out of memory");
    return NULL;
  }
  s->formats = o->formats != 0 ? o->formats : FF_PLOT_PNG;
  s->no_render = o->no_render;
  s->progress = o->progress;
  s->progress_ctx = o->progress_ctx;
  s->dir = strdup(out_dir);
  s->gnuplot = strdup(o->gnuplot != NULL ? o->gnuplot : "gnuplot");
  if (o->plots_dir != NULL) {
    char *path = ff_plot_join(o->plots_dir, "style.gp");

    if (path != NULL) {
      s->style = slurp(path);
      if (s->style == NULL && errno != ENOENT) {
        ff_diag_set(d, FF_EIO, NULL, "cannot read '%s': %s", path,
                    strerror(errno));
        free(path);
        ff_plot_set_free(s);
        return NULL;
      }
      free(path);
    }
  }
  if (s->style == NULL)
    s->style = strdup(ff_plot_style_builtin);
  if (s->dir == NULL || s->gnuplot == NULL || s->style == NULL) {
    ff_diag_set(d, FF_EIO, NULL, "out of memory");
    ff_plot_set_free(s);
    return NULL;
  }
  return s;
}

void ff_plot_set_free(struct ff_plot_set *s)
{
  if (s == NULL)
    return;
  free(s->dir);
  free(s->style);
  free(s->gnuplot);
  free(s->stems);
  free(s);
}

const char *ff_plot_set_dir(const struct ff_plot_set *s)
{
  return s->dir;
}

static int stem_taken(const struct ff_plot_set *s, const char *stem)
{
  size_t k;

  if (strcmp(stem, "render") == 0)     /* the driver script's name */
    return 1;
  for (k = 0; k < s->n; k++)
    if (strcmp(s->stems[k], stem) == 0)
      return 1;
  return 0;
}

int ff_plot_set_claim(struct ff_plot_set *s, const char *name,
                      char stem[FF_PLOT_STEM_MAX], struct ff_diag *d)
{
  char base[FF_PLOT_STEM_MAX - 8];
  unsigned k;

  ff_plot_safe_name(name, base, sizeof base);
  strcpy(stem, base);
  for (k = 2; stem_taken(s, stem); k++)
    snprintf(stem, FF_PLOT_STEM_MAX, "%s_%u", base, k);
  if (s->n == s->cap) {
    size_t cap = s->cap != 0 ? 2 * s->cap : 16;
    char (*v)[FF_PLOT_STEM_MAX] = realloc(s->stems, cap * sizeof *v);

    if (v == NULL)
      return ff_diag_set(d, FF_EIO, NULL, "out of memory");
    s->stems = v;
    s->cap = cap;
  }
  strcpy(s->stems[s->n++], stem);
  return FF_OK;
}

/*
 * Makes a found program path absolute: gnuplot is started after a chdir
 * into the output folder, where a relative path would point elsewhere.
 */
static int absolute(char *out, size_t n)
{
  char cwd[4096];
  char *rel;
  int ok;

  if (out[0] == '/')
    return 1;
  if (getcwd(cwd, sizeof cwd) == NULL)
    return 0;
  rel = strdup(out);
  if (rel == NULL)
    return 0;
  ok = snprintf(out, n, "%s/%s", cwd, rel) < (int)n;
  free(rel);
  return ok;
}

int ff_plot_find_gnuplot(const char *prog, char *out, size_t n)
{
  const char *path, *p;

  if (prog == NULL || prog[0] == '\0')
    prog = "gnuplot";
  if (strchr(prog, '/') != NULL) {
    if (access(prog, X_OK) != 0 || strlen(prog) >= n)
      return 0;
    strcpy(out, prog);
    return absolute(out, n);
  }
  path = getenv("PATH");
  if (path == NULL)
    path = "/usr/local/bin:/usr/bin:/bin";
  for (p = path; ; ) {
    size_t len = strcspn(p, ":");
    struct stat st;

    /* An empty PATH entry means the current folder, as for execvp. */
    if (len + strlen(prog) + 3 <= n) {
      snprintf(out, n, "%.*s/%s", (int)(len != 0 ? len : 1),
               len != 0 ? p : ".", prog);
      if (stat(out, &st) == 0 && S_ISREG(st.st_mode) &&
          access(out, X_OK) == 0)
        return absolute(out, n);
    }
    if (p[len] == '\0')
      break;
    p += len + 1;
  }
  return 0;
}
