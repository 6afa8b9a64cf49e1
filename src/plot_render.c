/* plot_render.c - plot stage: runs gnuplot over a figure set (fork/exec, no shell) and collects its errors. */
#include <errno.h>
#include <fcntl.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>
#include <sys/stat.h>
#include <sys/types.h>
#include <sys/wait.h>
#include "frostfit/plot.h"
#include "plot_impl.h"

#define MAX_WORKERS 4          /* gnuplot processes at once */
#define MIN_PER_WORKER 4       /* fewer figures are not worth a process */


/* Hidden name gnuplot renders an image to before it is published. */
#define PART_PREFIX ".ff-part-"
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

/* render.gp: the user's way to re-render every figure with one command. */
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

/* An unlinked scratch file in dir (the descriptor keeps it); -1 on error. */
static int scratch_fd(const char *dir)
{
  char *name = ff_plot_join(dir, ".ff-gnuplot.XXXXXX");
  int fd;

  if (name == NULL)
    return -1;
  fd = mkstemp(name);
  if (fd >= 0)
    unlink(name);
  free(name);
  return fd;
}

/*
 * gnuplot's standard input for figures [a, b): a file, not a script
 * argument, because gnuplot keeps reading standard input after an error,
 * so one bad figure does not stop the others. The markers (printed on
 * stderr) attribute each message to its figure; the cleanup lines close a
 * multiplot or output file that an aborted figure left open.
 */
static int worker_input(const struct ff_plot_set *s, size_t a, size_t b)
{
  struct ff_plot_buf buf;
  struct ff_diag d = FF_DIAG_INIT;
  char words[32];
  const char *p;
  size_t k, len;
  int fd;

  if (ff_plot_buf_open(&buf, &d) != FF_OK)
    return -1;
  fprintf(buf.f, "formats = '%s'\noutprefix = '%s'\n",
          ff_plot_formats_words(s->formats, words, sizeof words),
          PART_PREFIX);
  for (k = a; k < b; k++)
    fprintf(buf.f, "print 'frostfit-figure %s'\nload '%s.gp'\n"
                   "unset multiplot\nset output\n", s->stems[k], s->stems[k]);
  if (fclose(buf.f) != 0) {
    buf.f = NULL;
    ff_plot_buf_discard(&buf);
    return -1;
  }
  buf.f = NULL;
  fd = scratch_fd(s->dir);
  p = buf.text;
  len = buf.len;
  while (fd >= 0 && len > 0) {
    ssize_t w = write(fd, p, len);

    if (w < 0 && errno == EINTR)
      continue;
    if (w <= 0) {
      close(fd);
      fd = -1;
      break;
    }
    p += w;
    len -= (size_t)w;
  }
  ff_plot_buf_discard(&buf);
  if (fd >= 0 && lseek(fd, 0, SEEK_SET) != 0) {
    close(fd);
    fd = -1;
  }
  return fd;
}

/* Removes outputs of an earlier run so a stale file never passes as new,
 * and any hidden part file an interrupted run left. */
static void remove_old_outputs(const struct ff_plot_set *s)
{
  static const char *const ext[] = { "png", "svg", "pdf" };
  size_t k, e;
  int part;
  char name[FF_PLOT_STEM_MAX + 32];

  for (k = 0; k < s->n; k++)
    for (e = 0; e < 3; e++)
      for (part = 0; part < 2; part++) {
        char *path;

        snprintf(name, sizeof name, "%s%s.%s", part ? PART_PREFIX : "",
                 s->stems[k], ext[e]);
        path = ff_plot_join(s->dir, name);
        if (path != NULL)
          unlink(path);
        free(path);
      }
}

/* gnuplot wrote every image under a hidden part name: a figure it finished
 * is renamed into place (atomic in one folder), a failed one's part files
 * are removed, so no half-written image ever has a final name. */
static void publish_outputs(const struct ff_plot_set *s,
                            const unsigned char *failed)
{
  static const char *const ext[] = { "png", "svg", "pdf" };
  char part[FF_PLOT_STEM_MAX + 32], name[FF_PLOT_STEM_MAX + 8];

  for (size_t k = 0; k < s->n; k++)
    for (size_t e = 0; e < 3; e++) {
      char *from, *to;

      snprintf(part, sizeof part, "%s%s.%s", PART_PREFIX, s->stems[k], ext[e]);
      snprintf(name, sizeof name, "%s.%s", s->stems[k], ext[e]);
      from = ff_plot_join(s->dir, part);
      to = ff_plot_join(s->dir, name);
      if (from != NULL && to != NULL) {
        if (failed[k] || rename(from, to) != 0)
          unlink(from);
      }
      free(from);
      free(to);
    }
}

/* One gnuplot process: its figures, input, captured stderr, status. */
struct worker {
  size_t a, b;                 /* figures [a, b) */
  int infd, errfd;
  pid_t pid;
  int status;
  off_t seen_off;              /* stderr read up to here for markers */
  size_t markers;              /* figure markers seen so far */
};

/* Starts prog in s->dir reading w->infd, stderr into w->errfd. */
static int start(const struct ff_plot_set *s, const char *prog,
                 struct worker *w, struct ff_diag *d)
{
  char *const argv[] = { (char *)prog, NULL };
  int nullfd = open("/dev/null", O_WRONLY);

  w->pid = fork();
  if (w->pid < 0) {
    int e = errno;

    if (nullfd >= 0)
      close(nullfd);
    return ff_diag_set(d, FF_EIO, NULL, "cannot start gnuplot: %s",
                       strerror(e));
  }
  if (w->pid == 0) {           /* child: only async-signal-safe calls */
    if (chdir(s->dir) != 0 || dup2(w->infd, 0) < 0 || dup2(w->errfd, 2) < 0 ||
        (nullfd >= 0 && dup2(nullfd, 1) < 0))
      _exit(126);
    execv(prog, argv);
    _exit(127);
  }
  if (nullfd >= 0)
    close(nullfd);
  return FF_OK;
}

static void finish_worker(struct worker *w)
{
  while (w->pid > 0 && waitpid(w->pid, &w->status, 0) < 0 && errno == EINTR)
    ;
  w->pid = 0;
}

/* 1 when the worker has exited (reaped into w->status), 0 while it runs. */
static int worker_exited(struct worker *w)
{
  pid_t got;

  if (w->pid <= 0)
    return 1;
  do
    got = waitpid(w->pid, &w->status, WNOHANG);
  while (got < 0 && errno == EINTR);
  if (got == 0)
    return 0;
  w->pid = 0;                  /* exited, or cannot be waited for */
  return 1;
}

/* Counts the figure markers gnuplot has printed so far into the worker's
 * stderr file; only whole lines are read, the rest waits for the next call. */
static void count_markers(struct worker *w)
{
  static const char marker[] = "frostfit-figure ";
  char buf[4096];
  ssize_t got;

  while ((got = pread(w->errfd, buf, sizeof buf, w->seen_off)) > 0) {
    size_t line = 0, used = 0;

    for (size_t i = 0; i < (size_t)got; i++) {
      if (buf[i] != '\n')
        continue;
      if (i - line >= sizeof marker - 1 &&
          memcmp(buf + line, marker, sizeof marker - 1) == 0)
        w->markers++;
      line = used = i + 1;
    }
    if (used == 0 && got == (ssize_t)sizeof buf)
      used = sizeof buf;       /* a line longer than buf: not a marker */
    if (used == 0)
      return;                  /* no whole line yet */
    w->seen_off += (off_t)used;
  }
}

/*
 * Waits for every worker, reporting figures done as their markers appear:
 * a figure is done when the next one's marker is printed or its gnuplot
 * exits. Polls every 50 ms; without a callback it just waits.
 */
static void wait_workers(const struct ff_plot_set *s, struct worker *w,
                         size_t nw)
{
  const struct timespec nap = { 0, 50 * 1000 * 1000 };
  size_t k, running = nw, done, last = (size_t)-1;

  if (s->progress == NULL) {
    for (k = 0; k < nw; k++)
      finish_worker(&w[k]);
    return;
  }
  while (running > 0) {
    running = 0;
    done = 0;
    for (k = 0; k < nw; k++) {
      if (worker_exited(&w[k])) {
        done += w[k].b - w[k].a;
        continue;
      }
      running++;
      count_markers(&w[k]);
      if (w[k].markers > 1)
        done += w[k].markers - 1;
    }
    if (done != last && running > 0)
      s->progress(s->progress_ctx, "rendering figures", done, s->n);
    last = done;
    if (running > 0)
      nanosleep(&nap, NULL);
  }
  s->progress(s->progress_ctx, "rendering figures", s->n, s->n);
}

/* Reads a worker's stderr back and attributes each line to its figure. */
static void digest_stderr(const struct ff_plot_set *s, int errfd,
                          struct ff_plot_report *r, unsigned char *failed)
{
  char *text, *line, *save = NULL;
  off_t size = lseek(errfd, 0, SEEK_END);
  size_t n = 0, fig = s->n;    /* s->n: before the first figure */
  ssize_t got;

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
      for (fig = 0; fig < s->n; fig++)
        if (strcmp(s->stems[fig], line + 16) == 0)
          break;
      continue;
    }
    while (*p == ' ' || *p == '\t')
      p++;
    if (*p == '\0' || strcmp(p, "^") == 0)
      continue;
    if (fig < s->n && strncmp(p, "warning", 7) != 0)
      failed[fig] = 1;
    if (fig < s->n)
      append(r->errors, sizeof r->errors, "%s.gp: %s\n", s->stems[fig], p);
    else
      append(r->errors, sizeof r->errors, "gnuplot: %s\n", p);
  }
  free(text);
}

/* Each asked-for output must exist and be non-empty after the run. */
static void check_outputs(const struct ff_plot_set *s, unsigned char *failed,
                          struct ff_plot_report *r)
{
  static const struct {
    unsigned bit;
    const char *ext;
  } fmt[] = { { FF_PLOT_PNG, "png" }, { FF_PLOT_SVG, "svg" },
              { FF_PLOT_PDF, "pdf" } };
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
      path = ff_plot_join(s->dir, name);
      ok = path != NULL && stat(path, &st) == 0 && st.st_size > 0;
      free(path);
      if (!ok && !failed[k]) {
        failed[k] = 1;
        append(r->errors, sizeof r->errors, "%s.gp: gnuplot wrote no %s\n",
               s->stems[k], name);
      }
    }
}

/* How many gnuplot processes: one per CPU, at most MAX_WORKERS, and at
 * least MIN_PER_WORKER figures each. */
static size_t worker_count(size_t n_fig)
{
  long cpus = sysconf(_SC_NPROCESSORS_ONLN);
  size_t w = cpus > 0 ? (size_t)cpus : 1;

  if (w > MAX_WORKERS)
    w = MAX_WORKERS;
  if (w > (n_fig + MIN_PER_WORKER - 1) / MIN_PER_WORKER)
    w = (n_fig + MIN_PER_WORKER - 1) / MIN_PER_WORKER;
  return w > 0 ? w : 1;
}

int ff_plot_render(struct ff_plot_set *s, struct ff_plot_report *r,
                   struct ff_diag *d)
{
  struct worker w[MAX_WORKERS];
  char prog[4096];
  unsigned char *failed;
  size_t nw, k, i;
  int st = FF_OK, cannot_run = 0;
  double t0;

  memset(r, 0, sizeof *r);
  r->n_figures = s->n;
  render_command(s, r->command, sizeof r->command);
  if (write_driver(s, d) != FF_OK)
    return FF_EIO;
  if (s->no_render || s->n == 0 ||
      !ff_plot_find_gnuplot(s->gnuplot, prog, sizeof prog))
    return FF_OK;
  failed = calloc(s->n, 1);
  if (failed == NULL)
    return ff_diag_set(d, FF_EIO, NULL, "out of memory");
  remove_old_outputs(s);

  /* Contiguous chunks of the figure list, one per gnuplot process. */
  nw = worker_count(s->n);
  r->processes = (unsigned)nw;
  for (k = 0; k < nw; k++) {
    w[k].a = s->n * k / nw;
    w[k].b = s->n * (k + 1) / nw;
    w[k].pid = 0;
    w[k].status = 0;
    w[k].seen_off = 0;
    w[k].markers = 0;
    w[k].infd = worker_input(s, w[k].a, w[k].b);
    w[k].errfd = scratch_fd(s->dir);
    if (w[k].infd < 0 || w[k].errfd < 0) {
      st = ff_diag_set(d, FF_EIO, NULL, "cannot write in '%s': %s", s->dir,
                       strerror(errno));
      nw = k + 1;
      break;
    }
  }
  t0 = now_s();
  for (k = 0; k < nw && st == FF_OK; k++)
    st = start(s, prog, &w[k], d);
  if (st == FF_OK)
    wait_workers(s, w, nw);
  for (k = 0; k < nw; k++)
    finish_worker(&w[k]);
  r->seconds = now_s() - t0;

  for (k = 0; k < nw; k++) {
    if (st == FF_OK && w[k].errfd >= 0) {
      digest_stderr(s, w[k].errfd, r, failed);
      if (WIFEXITED(w[k].status) && WEXITSTATUS(w[k].status) >= 126)
        cannot_run = WEXITSTATUS(w[k].status);
      else if (WIFSIGNALED(w[k].status))
        for (i = w[k].a; i < w[k].b; i++)
          failed[i] = 1;
    }
    if (w[k].infd >= 0)
      close(w[k].infd);
    if (w[k].errfd >= 0)
      close(w[k].errfd);
  }
  if (st == FF_OK && cannot_run != 0) {
    st = ff_diag_set(d, FF_EIO, NULL, "cannot run '%s' (exit %d)", prog,
                     cannot_run);
  } else if (st == FF_OK) {
    r->rendered = 1;
    publish_outputs(s, failed);
    check_outputs(s, failed, r);
    for (k = 0; k < s->n; k++)
      r->n_failed += failed[k];
    if (r->n_failed > 0) {
      size_t first = 0;

      while (!failed[first])
        first++;
      st = ff_diag_set(d, FF_EIO, NULL,
                       "gnuplot failed on %zu of %zu figures, first '%s.gp'",
                       r->n_failed, s->n, s->stems[first]);
    }
  }
  free(failed);
  return st;
}
