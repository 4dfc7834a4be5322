/* Writing a file without ever leaving a truncated one (see textfile.h). */
#include "text/textfile.h"

#include <errno.h>
#include <fcntl.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#define MAX_HOPS 40   /* symlinks followed before giving up (as ELOOP) */
#define TRIES 100     /* temporary names tried before giving up */

static void os_error(int e, char *dst, size_t cap)
{
  if (e == 0 || strerror_r(e, dst, cap) != 0) snprintf(dst, cap, "error %d", e);
}

static int fail_os(sw_err *err, int e, const char *what, const char *path, const char *tail)
{
  char why[128];
  os_error(e, why, sizeof why);
  return sw_err_set(err, SW_EIO, "cannot %s \"%s\": %s%s", what, path, why, tail);
}

static char *dup_text(const char *a, size_t na, const char *b, size_t nb, sw_err *err)
{
  char *s = sw_alloc(na + nb + 1, 1, err);
  if (!s) return NULL;
  memcpy(s, a, na);
  memcpy(s + na, b, nb);
  s[na + nb] = '\0';
  return s;
}

/* Link text t read from link cur, as a name: absolute as is, else beside cur. */
static char *beside(const char *cur, const char *t, size_t nt, sw_err *err)
{
  const char *slash = strrchr(cur, '/');
  size_t nd = slash ? (size_t)(slash - cur) + 1 : 0;
  if (t[0] == '/') nd = 0;
  return dup_text(cur, nd, t, nt, err);
}

/* Magic links of the kernel (/dev/stdout -> /proc/self/fd/1 -> a file the
 * shell opened) name an open file, not a place to rename into. */
static int is_magic(const char *name)
{
  return strncmp(name, "/proc/", 6) == 0 || strncmp(name, "/dev/fd/", 8) == 0;
}

/* Follows symlinks from path to the name that is not one (it may not exist
 * yet).  *magic: the chain passed through a magic link. */
static int resolve(const char *path, char **out, int *magic, sw_err *err)
{
  char *cur = dup_text(path, strlen(path), "", 0, err);
  int hops;
  *out = NULL;
  *magic = 0;
  if (!cur) return SW_ENOMEM;
  for (hops = 0; hops <= MAX_HOPS; hops++) {
    struct stat sb;
    char *t, *next;
    size_t cap;
    ssize_t n;
    if (is_magic(cur)) *magic = 1;
    if (lstat(cur, &sb) != 0 || !S_ISLNK(sb.st_mode)) { *out = cur; return SW_OK; }
    /* a link's size is its text's length; /proc's links say 0 */
    cap = sb.st_size > 0 ? (size_t)sb.st_size + 1 : 4096;
    if (!(t = sw_alloc(cap, 1, err))) { free(cur); return SW_ENOMEM; }
    n = readlink(cur, t, cap);
    if (n <= 0 || (size_t)n >= cap) { /* failed, or changed while read */
      int e = n < 0 ? errno : EIO;
      free(t);
      free(cur);
      return fail_os(err, e, "follow the symlink", path, "");
    }
    next = beside(cur, t, (size_t)n, err);
    free(t);
    free(cur);
    if (!next) return SW_ENOMEM;
    cur = next;
  }
  free(cur);
  return fail_os(err, ELOOP, "write", path, "");
}

/* A name-sized random tail for the temporary: no global state, so mixed
 * from the process, the clock, the stack and the attempt (splitmix64). */
static void random_tail(char *dst, unsigned attempt, const void *where)
{
  static const char digits[] = "abcdefghijklmnopqrstuvwxyz0123456789";
  struct timespec ts;
  uint64_t z;
  int i;
  ts.tv_sec = 0;
  ts.tv_nsec = 0;
  clock_gettime(CLOCK_REALTIME, &ts);
  z = (uint64_t)getpid() * 0x9e3779b97f4a7c15u ^ (uint64_t)ts.tv_nsec ^
      ((uint64_t)ts.tv_sec << 30) ^ (uint64_t)(uintptr_t)where ^ ((uint64_t)attempt << 48);
  z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9u;
  z = (z ^ (z >> 27)) * 0x94d049bb133111ebu;
  z ^= z >> 31;
  for (i = 0; i < 8; i++) { dst[i] = digits[z % 36]; z /= 36; }
  dst[8] = '\0';
}

/* Creates ".<base>.sw-<random>" beside target, exclusively (mkstemp's
 * method with mode 0666, so the umask applies as to any new file). */
static int make_temp(sw_wfile *w, sw_err *err)
{
  const char *slash = strrchr(w->target, '/');
  size_t nd = slash ? (size_t)(slash - w->target) + 1 : 0;
  const char *base = w->target + nd;
  size_t nb = strlen(base);
  unsigned k;
  char *name = sw_alloc(nd + nb + 16, 1, err);
  if (!name) return -1;
  for (k = 0; k < TRIES; k++) {
    char tail[9];
    int fd;
    random_tail(tail, k, &tail);
    memcpy(name, w->target, nd);
    snprintf(name + nd, nb + 16, ".%s.sw-%s", base, tail);
    fd = open(name, O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC | O_NOFOLLOW, 0666);
    if (fd >= 0) { w->tmp = name; return fd; }
    if (errno != EEXIST) {
      int e = errno;
      free(name);
      fail_os(err, e, "write", w->path, " (no temporary file can be made in its directory)");
      return -1;
    }
  }
  free(name);
  fail_os(err, EEXIST, "write", w->path, " (no free temporary name in its directory)");
  return -1;
}

/* The existing regular target: refused when this process may not write it
 * (the test is the system's own: an open for writing, nothing truncated). */
static int check_writable(const sw_wfile *w, sw_err *err)
{
  int fd = open(w->target, O_WRONLY | O_CLOEXEC | O_NOCTTY | O_NONBLOCK);
  if (fd < 0) return fail_os(err, errno, "write", w->path, " (the file is untouched)");
  close(fd);
  return SW_OK;
}

static int open_direct(sw_wfile *w, sw_err *err)
{
  errno = 0;
  w->f = fopen(w->path, "w");
  if (!w->f) return fail_os(err, errno, "write", w->path, "");
  return SW_OK;
}

/* The temporary for a regular (or new) target, with the old file's mode. */
static int drop_temp(sw_wfile *w, int fd, int e, const char *what, sw_err *err)
{
  close(fd);
  unlink(w->tmp);
  free(w->tmp);
  w->tmp = NULL;
  return fail_os(err, e, what, w->path, "");
}

static int open_temp(sw_wfile *w, const struct stat *old, sw_err *err)
{
  int fd;
  if (old && check_writable(w, err)) return err ? err->code : SW_EIO;
  if ((fd = make_temp(w, err)) < 0) return err ? err->code : SW_EIO;
  if (old) {
    if (fchown(fd, old->st_uid, old->st_gid) != 0) { /* not allowed: the group, then none */
      if (fchown(fd, (uid_t)-1, old->st_gid) != 0) errno = 0;
    }
    if (fchmod(fd, old->st_mode & 07777) != 0)
      return drop_temp(w, fd, errno, "keep the mode of", err);
  }
  if (!(w->f = fdopen(fd, "w"))) return drop_temp(w, fd, errno, "write", err);
  return SW_OK;
}

int sw_wfile_open(sw_wfile *w, const char *path, sw_err *err)
{
  struct stat sb;
  int magic, st, exists;
  memset(w, 0, sizeof *w);
  if (!path || !*path) return sw_err_set(err, SW_EINVAL, "the path is empty");
  w->path = path;
  exists = stat(path, &sb) == 0;
  if (!exists && errno != ENOENT) return fail_os(err, errno, "write", path, "");
  if (exists && S_ISDIR(sb.st_mode))
    return sw_err_set(err, SW_EIO, "cannot write \"%s\": it is a directory", path);
  if (exists && !S_ISREG(sb.st_mode)) return open_direct(w, err); /* FIFO, device */
  if ((st = resolve(path, &w->target, &magic, err))) return st;
  if (magic) { /* an open file of this process: written as the system would */
    free(w->target);
    w->target = NULL;
    return open_direct(w, err);
  }
  st = open_temp(w, exists ? &sb : NULL, err);
  if (st) sw_wfile_abort(w);
  return st;
}

static void release(sw_wfile *w)
{
  free(w->tmp);
  free(w->target);
  memset(w, 0, sizeof *w);
}

void sw_wfile_abort(sw_wfile *w)
{
  if (w->f) fclose(w->f);
  if (w->tmp) unlink(w->tmp);
  release(w);
}

int sw_wfile_commit(sw_wfile *w, sw_err *err)
{
  int e = errno, bad; /* a failed fprintf just before left its reason here */
  const char *tail = w->tmp ? " (the old file is untouched)" : "";
  bad = ferror(w->f);
  if (!bad) {
    errno = 0;
    bad = fflush(w->f) != 0 || (w->tmp && fsync(fileno(w->f)) != 0);
    e = errno;
  }
  if (bad && !e) e = EIO;
  if (fclose(w->f) != 0 && !bad) { bad = 1; e = errno; }
  w->f = NULL;
  if (!bad && w->tmp && rename(w->tmp, w->target) != 0) { bad = 1; e = errno; }
  if (bad) {
    fail_os(err, e, "write", w->path, tail);
    sw_wfile_abort(w);
    return SW_EIO;
  }
  release(w);
  return SW_OK;
}

int sw_write_file(const char *path, const char *data, size_t len, sw_err *err)
{
  sw_wfile w;
  int st = sw_wfile_open(&w, path, err);
  if (st) return st;
  if (len && fwrite(data, 1, len, w.f) != len) {
    int e = errno;
    sw_wfile_abort(&w);
    return fail_os(err, e ? e : EIO, "write", path, " (the old file is untouched)");
  }
  return sw_wfile_commit(&w, err);
}
