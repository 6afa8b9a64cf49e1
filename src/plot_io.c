/* plot_io.c - plot stage: figure sets, atomic writes, and running gnuplot without a shell. */
#include <errno.h>
#include <stdarg.h>
#include <fcntl.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>
#include <sys/socket.h>
#include <sys/stat.h>
#include <sys/types.h>
#include <sys/wait.h>
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

static char *join(const char *dir, const char *name)
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
  char *final = join(dir, name);
  char *tmp = join(dir, ".ff-tmp.XXXXXX");
  const char *p = data;
  int fd, err = 0;

  if (final == NULL || tmp == NULL) {
    free(final);
    free(tmp);
    return ff_diag_set(d, FF_EIO, NULL, "out of memory");
  }
  fd = mkstemp(tmp);
  if (fd < 0) {
    ff_diag_set(d, FF_EIO, NULL, "cannot write in '%s': %s", dir,
                strerror(errno));
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
  if (err != 0) {
    unlink(tmp);
    ff_diag_set(d, FF_EIO, NULL, "cannot write '%s': %s", final,
                strerror(err));
  }
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
  s->dir = strdup(out_dir);
  s->gnuplot = strdup(o->gnuplot != NULL ? o->gnuplot : "gnuplot");
  if (o->plots_dir != NULL) {
    char *path = join(o->plots_dir, "style.gp");

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

int ff_plot_find_gnuplot(const char *prog, char *out, size_t n)
{
  const char *path, *p;

  if (prog == NULL || prog[0] == '\0')
    prog = "gnuplot";
  if (strchr(prog, '/') != NULL) {
    if (access(prog, X_OK) != 0 || strlen(prog) >= n)
      return 0;
    strcpy(out, prog);
    return 1;
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
        return 1;
    }
    if (p[len] == '\0')
      break;
    p += len + 1;
  }
  return 0;
}

/* Appends printf-style text to a fixed buffer, silently truncating. */
static void append(char *buf, size_t n, const char *fmt, ...)
  __attribute__((format(printf, 3, 4)));

static void append(char *buf, size_t n, const char *fmt, ...)
{
  size_t used = strlen(buf);
  va_list ap;

  if (used + 1 >= n)
    return;
  va_start(ap, fmt);
  vsnprintf(buf + used, n - used, fmt, ap);
  va_end(ap);
}

/* The shell line a user types to render the set: cd 'DIR' && gnuplot render.gp */
static void render_command(const struct ff_plot_set *s, char *out, size_t n)
{
  const char *p;

  out[0] = '\0';
  append(out, n, "cd '");
  for (p = s->dir; *p != '\0'; p++) {
    if (*p == '\'')
      append(out, n, "'\\''");
    else
      append(out, n, "%c", *p);
  }
  append(out, n, "' && gnuplot render.gp");
}

static int write_driver(const struct ff_plot_set *s, struct ff_diag *d)
{
  struct ff_plot_buf b;
  char words[32];
  size_t k;

  if (ff_plot_buf_open(&b, d) != FF_OK)
    return FF_EIO;
  fprintf(b.f,
          "# render.gp - renders every figure in this folder with one gnuplot run.\n"
          "# Usage: cd to this folder, then `gnuplot render.gp`; to pick formats:\n"
          "#   gnuplot -e \"formats = 'png svg pdf'\" render.gp\n"
          "# Written by frostfit; each NAME.gp also runs on its own.\n"
          "if (!exists(\"formats\")) formats = '%s'\n",
          ff_plot_formats_words(s->formats, words, sizeof words));
  for (k = 0; k < s->n; k++)
    fprintf(b.f, "load '%s.gp'\n", s->stems[k]);
  return ff_plot_buf_commit(&b, s->dir, "render.gp", d);
}

static double now_s(void)
{
  struct timespec ts;

  clock_gettime(CLOCK_MONOTONIC, &ts);
  return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/*
 * What gnuplot reads on its standard input. Unlike a script file given as
 * an argument, gnuplot keeps reading standard input after an error, so one
 * bad figure does not stop the others; the markers (printed on stderr)
 * attribute each message to its figure, and the cleanup lines close a
 * multiplot or output file an aborted figure left open.
 */
static char *driver_stdin(const struct ff_plot_set *s, size_t *len)
{
  struct ff_plot_buf b;
  struct ff_diag d = FF_DIAG_INIT;
  char words[32];
  size_t k;
  FILE *f;

  if (ff_plot_buf_open(&b, &d) != FF_OK)
    return NULL;
  f = b.f;
  fprintf(f, "formats = '%s'\n",
          ff_plot_formats_words(s->formats, words, sizeof words));
  for (k = 0; k < s->n; k++)
    fprintf(f, "print 'frostfit-figure %s'\nload '%s.gp'\n"
               "unset multiplot\nset output\n", s->stems[k], s->stems[k]);
  if (fclose(f) != 0) {
    b.f = NULL;
    ff_plot_buf_discard(&b);
    return NULL;
  }
  *len = b.len;
  return b.text;
}

/* Removes outputs of an earlier run so a stale file never passes as new. */
static void remove_old_outputs(const struct ff_plot_set *s)
{
  static const char *const ext[] = { "png", "svg", "pdf" };
  size_t k, e;
  char name[FF_PLOT_STEM_MAX + 8];

  for (k = 0; k < s->n; k++)
    for (e = 0; e < 3; e++) {
      char *path;

      snprintf(name, sizeof name, "%s.%s", s->stems[k], ext[e]);
      path = join(s->dir, name);
      if (path != NULL)
        unlink(path);
      free(path);
    }
}

/* Runs prog in s->dir with text on stdin; stderr into errfd. */
static int run_gnuplot(const struct ff_plot_set *s, const char *prog,
                       const char *text, size_t len, int errfd,
                       int *wstatus, struct ff_diag *d)
{
  int sv[2];
  pid_t pid;
  int nullfd;
  char *const argv[] = { (char *)prog, NULL };

  /* A socket, not a pipe: send(MSG_NOSIGNAL) cannot raise SIGPIPE in the
   * caller when gnuplot exits early. */
  if (socketpair(AF_UNIX, SOCK_STREAM, 0, sv) != 0)
    return ff_diag_set(d, FF_EIO, NULL, "cannot start gnuplot: %s",
                       strerror(errno));
  nullfd = open("/dev/null", O_WRONLY);
  pid = fork();
  if (pid < 0) {
    int e = errno;

    close(sv[0]);
    close(sv[1]);
    if (nullfd >= 0)
      close(nullfd);
    return ff_diag_set(d, FF_EIO, NULL, "cannot start gnuplot: %s",
                       strerror(e));
  }
  if (pid == 0) {              /* child: only async-signal-safe calls */
    if (chdir(s->dir) != 0 || dup2(sv[1], 0) < 0 || dup2(errfd, 2) < 0 ||
        (nullfd >= 0 && dup2(nullfd, 1) < 0))
      _exit(126);
    close(sv[0]);
    close(sv[1]);
    execv(prog, argv);
    _exit(127);
  }
  close(sv[1]);
  if (nullfd >= 0)
    close(nullfd);
  while (len > 0) {
    ssize_t w = send(sv[0], text, len, MSG_NOSIGNAL);

    if (w < 0 && errno == EINTR)
      continue;
    if (w <= 0)
      break;                   /* gnuplot stopped reading: its stderr says why */
    text += w;
    len -= (size_t)w;
  }
  close(sv[0]);
  while (waitpid(pid, wstatus, 0) < 0) {
    if (errno != EINTR)
      return ff_diag_set(d, FF_EIO, NULL, "waiting for gnuplot: %s",
                         strerror(errno));
  }
  return FF_OK;
}

/* Reads the captured stderr back, attributes lines to figures. */
static void digest_stderr(const struct ff_plot_set *s, int errfd,
                          struct ff_plot_report *r, unsigned char *failed)
{
  char *text;
  off_t size = lseek(errfd, 0, SEEK_END);
  size_t n = 0;
  const char *cur = "render.gp";
  char *line, *save = NULL;
  ssize_t got;
  size_t fig = s->n;           /* s->n: not inside a figure */

  if (size <= 0 || lseek(errfd, 0, SEEK_SET) != 0)
    return;
  text = malloc((size_t)size + 1);
  if (text == NULL)
    return;
  while (n < (size_t)size &&
         (got = read(errfd, text + n, (size_t)size - n)) > 0)
    n += (size_t)got;
  text[n] = '\0';
  for (line = strtok_r(text, "\n", &save); line != NULL;
       line = strtok_r(NULL, "\n", &save)) {
    const char *p = line;

    if (strncmp(line, "frostfit-figure ", 16) == 0) {
      size_t k;

      for (k = 0; k < s->n; k++)
        if (strcmp(s->stems[k], line + 16) == 0)
          break;
      fig = k;
      cur = k < s->n ? s->stems[k] : "render.gp";
      continue;
    }
    while (*p == ' ' || *p == '\t')
      p++;
    if (*p == '\0' || strcmp(p, "^") == 0)
      continue;
    if (fig < s->n && strncmp(p, "warning", 7) != 0)
      failed[fig] = 1;
    append(r->errors, sizeof r->errors, "%s%s: %s\n",
           fig < s->n ? cur : "", fig < s->n ? ".gp" : cur, p);
  }
  free(text);
}

/* Each asked-for output must exist and be non-empty after the run. */
static void check_outputs(const struct ff_plot_set *s, unsigned char *failed,
                          struct ff_plot_report *r)
{
  static const struct { unsigned bit; const char *ext; } fmt[] = {
    { FF_PLOT_PNG, "png" }, { FF_PLOT_SVG, "svg" }, { FF_PLOT_PDF, "pdf" }
  };
  size_t k, e;
  char name[FF_PLOT_STEM_MAX + 8];

  for (k = 0; k < s->n; k++)
    for (e = 0; e < 3; e++) {
      struct stat st;
      char *path;
      int ok;

      if ((s->formats & fmt[e].bit) == 0)
        continue;
      snprintf(name, sizeof name, "%s.%s", s->stems[k], fmt[e].ext);
      path = join(s->dir, name);
      ok = path != NULL && stat(path, &st) == 0 && st.st_size > 0;
      free(path);
      if (!ok && !failed[k]) {
        failed[k] = 1;
        append(r->errors, sizeof r->errors, "%s.gp: gnuplot wrote no %s\n",
               s->stems[k], name);
      }
    }
}

int ff_plot_render(struct ff_plot_set *s, struct ff_plot_report *r,
                   struct ff_diag *d)
{
  char prog[4096];
  char *text, *errname;
  size_t len, k;
  int errfd, wstatus = 0, st;
  unsigned char *failed;
  double t0;

  memset(r, 0, sizeof *r);
  r->n_figures = s->n;
  render_command(s, r->command, sizeof r->command);
  if (write_driver(s, d) != FF_OK)
    return FF_EIO;
  if (s->no_render || s->n == 0 ||
      !ff_plot_find_gnuplot(s->gnuplot, prog, sizeof prog))
    return FF_OK;

  text = driver_stdin(s, &len);
  failed = calloc(s->n, 1);
  errname = join(s->dir, ".ff-gnuplot-err.XXXXXX");
  if (text == NULL || failed == NULL || errname == NULL) {
    free(text);
    free(failed);
    free(errname);
    return ff_diag_set(d, FF_EIO, NULL, "out of memory");
  }
  errfd = mkstemp(errname);
  if (errfd < 0) {
    ff_diag_set(d, FF_EIO, NULL, "cannot write in '%s': %s", s->dir,
                strerror(errno));
    free(text);
    free(failed);
    free(errname);
    return FF_EIO;
  }
  unlink(errname);             /* the open descriptor keeps it alive */
  free(errname);
  remove_old_outputs(s);

  t0 = now_s();
  st = run_gnuplot(s, prog, text, len, errfd, &wstatus, d);
  r->seconds = now_s() - t0;
  free(text);
  if (st == FF_OK) {
    r->rendered = 1;
    digest_stderr(s, errfd, r, failed);
    if (WIFEXITED(wstatus) && WEXITSTATUS(wstatus) >= 126) {
      st = ff_diag_set(d, FF_EIO, NULL, "cannot run '%s' (exit %d)", prog,
                       WEXITSTATUS(wstatus));
      r->rendered = 0;
    } else if (WIFSIGNALED(wstatus)) {
      st = ff_diag_set(d, FF_EIO, NULL, "gnuplot was killed by signal %d",
                       WTERMSIG(wstatus));
    }
    if (r->rendered)
      check_outputs(s, failed, r);
  }
  close(errfd);
  for (k = 0; k < s->n; k++)
    r->n_failed += failed[k];
  if (st == FF_OK && r->n_failed > 0) {
    size_t first = 0;

    while (!failed[first])
      first++;
    st = ff_diag_set(d, FF_EIO, NULL,
                     "gnuplot failed on %zu of %zu figures, first '%s.gp'",
                     r->n_failed, s->n, s->stems[first]);
  }
  free(failed);
  return st;
}
