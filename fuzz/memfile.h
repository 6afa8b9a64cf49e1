/* fuzz/memfile.h - the harnesses' in-memory input file. The readers take a
 * path: each input is written to a memfd reached through /proc/self/fd,
 * rewritten for every input. Include after defining _GNU_SOURCE. */
#ifndef FF_FUZZ_MEMFILE_H
#define FF_FUZZ_MEMFILE_H

#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <sys/mman.h>
#include <unistd.h>

static int memfile_fd = -1;
static char memfile_path[64];

/* Puts data into the memory file; returns its path. Aborts on failure:
 * that is the harness's fault, not the input's. */
static const char *memfile_load(const char *name, const uint8_t *data,
                                size_t size)
{
  if (memfile_fd < 0) {
    memfile_fd = memfd_create(name, 0);
    if (memfile_fd < 0)
      abort();
    snprintf(memfile_path, sizeof memfile_path, "/proc/self/fd/%d",
             memfile_fd);
  }
  if (ftruncate(memfile_fd, 0) != 0)
    abort();
  for (size_t done = 0; done < size;) {
    ssize_t n = pwrite(memfile_fd, data + done, size - done, (off_t)done);
    if (n <= 0)
      abort();
    done += (size_t)n;
  }
  return memfile_path;
}

#endif /* FF_FUZZ_MEMFILE_H */
