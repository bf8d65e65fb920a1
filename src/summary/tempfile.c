/* tempfile: see tempfile.h. */
#include "summary/tempfile.h"

#include <errno.h>
#include <fcntl.h>
#include <limits.h>
#include <pthread.h>
#include <signal.h>
#include <stdatomic.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>
#include <sys/random.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include "io/message.h"

#define SUFFIX_LETTERS 6
#define ATTEMPTS 100
#define MAX_LINKS 40 /* as the kernel's own limit on links followed in a path */
#define COPY_BYTES (1u << 20)
#define TEMPFILE_SLOTS 16

/* ---- the named files a signal handler removes ---- */

enum { SLOT_FREE, SLOT_BUSY, SLOT_ARMED };

static struct {
    atomic_int state;     /* SLOT_FREE, SLOT_BUSY (being filled), SLOT_ARMED */
    char path[PATH_MAX];  /* the named temporary file while SLOT_ARMED */
} slots[TEMPFILE_SLOTS];

static const int CLEANUP_SIGNALS[] = {SIGTERM, SIGINT, SIGHUP, SIGXFSZ};
static pthread_once_t handlers_once = PTHREAD_ONCE_INIT;

/* Async-signal-safe: atomic loads, unlink(2) and raise(3).  SA_RESETHAND
 * made the action the default one on entry, so the raised signal ends the
 * process as it would have without sheaf's handler. */
static void remove_and_die(int sig)
{
    int saved = errno;
    for (int i = 0; i < TEMPFILE_SLOTS; i++)
        if (atomic_load(&slots[i].state) == SLOT_ARMED) unlink(slots[i].path);
    errno = saved;
    raise(sig);
}

static void install_handlers(void)
{
    for (size_t i = 0; i < sizeof CLEANUP_SIGNALS / sizeof *CLEANUP_SIGNALS; i++) {
        struct sigaction old, sa;
        if (sigaction(CLEANUP_SIGNALS[i], NULL, &old) != 0) continue;
        if ((old.sa_flags & SA_SIGINFO) || old.sa_handler != SIG_DFL) continue; /* the host's */
        memset(&sa, 0, sizeof sa);
        sa.sa_handler = remove_and_die;
        sigfillset(&sa.sa_mask);
        sa.sa_flags = SA_RESETHAND | SA_RESTART;
        sigaction(CLEANUP_SIGNALS[i], &sa, NULL);
    }
}

/* Blocks the cleanup signals on this thread (restored by unblock), so that
 * creating a file and recording its name, or renaming it and forgetting the
 * name, happen as one step for the handler. */
static void block(sigset_t *old)
{
    sigset_t set;
    sigemptyset(&set);
    for (size_t i = 0; i < sizeof CLEANUP_SIGNALS / sizeof *CLEANUP_SIGNALS; i++)
        sigaddset(&set, CLEANUP_SIGNALS[i]);
    pthread_sigmask(SIG_BLOCK, &set, old);
}

static void unblock(const sigset_t *old) { pthread_sigmask(SIG_SETMASK, old, NULL); }

/* A slot holding `path`, not yet armed; -1 when none is free or it is too long. */
static int slot_claim(const char *path)
{
    size_t n = strlen(path);
    if (n >= PATH_MAX) return -1;
    pthread_once(&handlers_once, install_handlers);
    for (int i = 0; i < TEMPFILE_SLOTS; i++) {
        int expect = SLOT_FREE;
        if (atomic_compare_exchange_strong(&slots[i].state, &expect, SLOT_BUSY)) {
            memcpy(slots[i].path, path, n + 1);
            return i;
        }
    }
    return -1;
}

static void slot_set(int slot, int state)
{
    if (slot >= 0) atomic_store(&slots[slot].state, state);
}

/* ---- names ---- */

/* 64 random bits: the kernel's, else a mix of the clock, the process and
 * the attempt (O_EXCL keeps a guessed name safe; it only costs a retry). */
static uint64_t random_bits(unsigned attempt)
{
    uint64_t r;
    if (getrandom(&r, sizeof r, GRND_NONBLOCK) == (ssize_t)sizeof r) return r;
    struct timespec ts;
    clock_gettime(CLOCK_REALTIME, &ts);
    r = (uint64_t)ts.tv_nsec ^ ((uint64_t)ts.tv_sec << 30) ^ ((uint64_t)getpid() << 40) ^ attempt;
    /* splitmix64 finaliser (Steele, Lea & Flood 2014) */
    r = (r ^ (r >> 30)) * UINT64_C(0xBF58476D1CE4E5B9);
    r = (r ^ (r >> 27)) * UINT64_C(0x94D049BB133111EB);
    return r ^ (r >> 31);
}

/* Writes prefix + six random letters + suffix into name (len bytes). */
static void random_name(char *name, size_t len, const char *prefix, const char *middle,
                        const char *suffix, unsigned attempt)
{
    static const char LETTERS[] = "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789";
    uint64_t r = random_bits(attempt);
    char letters[SUFFIX_LETTERS + 1];
    for (int i = 0; i < SUFFIX_LETTERS; i++, r /= sizeof LETTERS - 1)
        letters[i] = LETTERS[r % (sizeof LETTERS - 1)];
    letters[SUFFIX_LETTERS] = '\0';
    snprintf(name, len, "%s%s%s%s", prefix, middle, suffix, letters);
}

/* The directory part of path ("." when it has none), and the last part. */
static char *dir_of(const char *path)
{
    const char *slash = strrchr(path, '/');
    if (!slash) return strdup(".");
    if (slash == path) return strdup("/");
    return strndup(path, (size_t)(slash - path));
}

static const char *base_of(const char *path)
{
    const char *slash = strrchr(path, '/');
    return slash ? slash + 1 : path;
}

/* The name the symbolic link cur leads to (relative links resolved from
 * the link's directory), or NULL with errno set (not a link: EINVAL). */
static char *link_step(const char *cur)
{
    char link[PATH_MAX];
    ssize_t n = readlink(cur, link, sizeof link - 1);
    if (n < 0) return NULL;
    link[n] = '\0';
    if (link[0] == '/' || !strchr(cur, '/')) return strdup(link);
    char *dir = dir_of(cur);
    char *next = dir ? malloc(strlen(dir) + strlen(link) + 2) : NULL;
    if (next) sprintf(next, "%s/%s", dir, link);
    free(dir);
    return next;
}

/* Follows symbolic links from path to a name that is not one (absent, or a
 * file of another type).  Returns a new string, or NULL with errno set. */
static char *follow_links(const char *path)
{
    char *cur = strdup(path);
    for (int hops = 0; cur; hops++) {
        struct stat st;
        if (lstat(cur, &st) != 0) {
            if (errno == ENOENT) return cur;
            break;
        }
        if (!S_ISLNK(st.st_mode)) return cur;
        if (hops == MAX_LINKS) { errno = ELOOP; break; }
        char *next = link_step(cur);
        if (!next) break;
        free(cur);
        cur = next;
    }
    int saved = cur ? errno : ENOMEM;
    free(cur);
    errno = saved;
    return NULL;
}

/* The descriptor n when name is /dev/fd/n, /proc/self/fd/n,
 * /proc/thread-self/fd/n or /proc/PID/fd/n of this process, spelt with
 * any repeated '/' or "./" parts (/proc/self/fd//1 names descriptor 1 as
 * well: read as a file, `>> log` was replaced, not appended to); else -1. */
static int descriptor_in(const char *given)
{
    char name[64];
    size_t k = 0;
    for (const char *c = given; *c; c++) { /* lexically: "//" and "/./" are "/" */
        if (k && name[k - 1] == '/' && (*c == '/' || (c[0] == '.' && (c[1] == '/' || !c[1]))))
            continue;
        if (k + 1 == sizeof name) return -1; /* longer than any spelling of one */
        name[k++] = *c;
    }
    name[k] = '\0';
    char own[40];
    snprintf(own, sizeof own, "/proc/%ld/fd/", (long)getpid());
    static const char *const dirs[] = {"/dev/fd/", "/proc/self/fd/", "/proc/thread-self/fd/"};
    const char *rest = NULL;
    for (size_t i = 0; i < sizeof dirs / sizeof *dirs && !rest; i++)
        if (!strncmp(name, dirs[i], strlen(dirs[i]))) rest = name + strlen(dirs[i]);
    if (!rest && !strncmp(name, own, strlen(own))) rest = name + strlen(own);
    if (!rest || !*rest || strlen(rest) > 9) return -1;
    int fd = 0;
    for (const char *c = rest; *c; c++) {
        if (*c < '0' || *c > '9') return -1;
        fd = fd * 10 + (*c - '0');
    }
    return fd;
}

int tempfile_descriptor(const char *path)
{
    char *cur = strdup(path);
    for (int hops = 0; cur && hops <= MAX_LINKS; hops++) {
        int fd = descriptor_in(cur);
        if (fd >= 0) { free(cur); return fd; }
        char *next = link_step(cur); /* NULL: not a link (or gone), the chain's end */
        if (!next) break;
        free(cur);
        cur = next;
    }
    free(cur);
    return -1;
}

char *tempfile_target(const char *path) { return follow_links(path); }

/* ---- opening ---- */

static int fail(tempfile *t, char *err, size_t errlen, const char *path, const char *what)
{
    int saved = errno;
    if (saved == ENOMEM) snprintf(err, errlen, "out of memory");
    else message_printf(err, errlen, "%s: %s: %s", path, what, strerror(saved));
    free(t->path);
    free(t->tmp_path);
    t->path = t->tmp_path = NULL;
    errno = saved;
    return -1;
}

/* Bytes of the target's name a temporary name keeps: room for the
 * prefix, suffix and letters within a name's 255 bytes (the name only has
 * to be new; a target of 242 to 255 bytes could not be replaced). */
#define TMP_BASE_BYTES 200

/* path with its last part cut to TMP_BASE_BYTES bytes (a new string). */
static char *cut_base(const char *path)
{
    const char *base = base_of(path);
    size_t keep = (size_t)(base - path) + (strlen(base) > TMP_BASE_BYTES ? TMP_BASE_BYTES : strlen(base));
    return strndup(path, keep);
}

static int open_named(tempfile *t)
{
    char *stem = cut_base(t->path);
    if (!stem) { errno = ENOMEM; return -1; }
    size_t len = strlen(stem) + sizeof ".tmp." + SUFFIX_LETTERS;
    t->tmp_path = malloc(len);
    if (!t->tmp_path) { free(stem); errno = ENOMEM; return -1; }
    for (unsigned attempt = 0; attempt < ATTEMPTS; attempt++) {
        random_name(t->tmp_path, len, stem, ".tmp.", "", attempt);
        sigset_t old;
        block(&old);
        int slot = slot_claim(t->tmp_path);
        int fd = open(t->tmp_path, O_RDWR | O_CREAT | O_EXCL | O_CLOEXEC, 0666);
        int saved = errno;
        if (fd >= 0) slot_set(slot, SLOT_ARMED);
        else slot_set(slot, SLOT_FREE);
        unblock(&old);
        if (fd >= 0) { free(stem); t->fd = fd; t->slot = slot; return 0; }
        if (saved != EEXIST) { free(stem); errno = saved; return -1; }
    }
    free(stem);
    errno = EEXIST;
    return -1;
}

/* The folder of scratch files: $TMPDIR, or /tmp. */
static const char *scratch_dir(int *from_env)
{
    const char *dir = getenv("TMPDIR");
    *from_env = dir && *dir;
    return *from_env ? dir : "/tmp";
}

/* A file without a name for TEMPFILE_SCRATCH: O_TMPFILE in $TMPDIR or /tmp,
 * else a memory file (*in_memory set). */
static int open_scratch(int *in_memory)
{
    int from_env;
    int fd = open(scratch_dir(&from_env), O_TMPFILE | O_RDWR | O_CLOEXEC, 0600);
    *in_memory = fd < 0;
    if (fd < 0) fd = memfd_create("sheaf-output", MFD_CLOEXEC);
    return fd;
}

void tempfile_where(const tempfile *t, char *buf, size_t len)
{
    int from_env;
    const char *dir = scratch_dir(&from_env);
    if (t->kind != TEMPFILE_SCRATCH) snprintf(buf, len, "%s", "");
    else if (t->in_memory) snprintf(buf, len, " (its scratch copy in memory)");
    else snprintf(buf, len, " (its scratch file in %s%s)", dir, from_env ? ", $TMPDIR" : "");
}

/* An output that is not a regular file (a pipe, a terminal, a device):
 * written straight through fd, or, when the writer must seek, into a
 * scratch file copied to fd on commit.  Takes fd (closed on failure). */
static int attach(tempfile *t, int fd, int flags, const char *name, char *err, size_t errlen)
{
    if (!(flags & TEMPFILE_SEEKABLE)) {
        t->kind = TEMPFILE_THROUGH;
        t->fd = fd;
        return 0;
    }
    t->kind = TEMPFILE_SCRATCH;
    t->target_fd = fd;
    t->fd = open_scratch(&t->in_memory);
    if (t->fd < 0) {
        int saved = errno;
        close(fd);
        t->target_fd = -1;
        errno = saved;
        return fail(t, err, errlen, name, "cannot create a scratch file");
    }
    return 0;
}

int tempfile_open(tempfile *t, const char *path, int flags, char *err, size_t errlen)
{
    /* /dev/stdout and the like name a descriptor of this process: written
     * through it, as `-o -` writes standard output (an append or a shared
     * redirection keeps what it holds; a closed one fails). */
    int own = tempfile_descriptor(path);
    if (own >= 0) return tempfile_open_fd(t, own, path, flags, err, errlen);
    memset(t, 0, sizeof *t);
    t->fd = t->target_fd = t->slot = -1;
    struct stat st;
    int exists = stat(path, &st) == 0;
    if (!exists && errno != ENOENT) return fail(t, err, errlen, path, "cannot write");
    if (exists && !S_ISREG(st.st_mode)) {
        if (S_ISDIR(st.st_mode)) {
            errno = EISDIR;
            return fail(t, err, errlen, path, "cannot write");
        }
        if (!S_ISCHR(st.st_mode) && !S_ISFIFO(st.st_mode)) {
            message_printf(err, errlen,
                           "%s: not a regular file, a character device or a FIFO; refusing to "
                           "write to it", path);
            errno = EINVAL;
            return -1;
        }
        t->path = strdup(path);
        if (!t->path) { errno = ENOMEM; return fail(t, err, errlen, path, ""); }
        int fd = open(path, O_WRONLY | O_CLOEXEC | O_NOCTTY);
        if (fd < 0) return fail(t, err, errlen, path, "cannot open");
        return attach(t, fd, flags, path, err, errlen);
    }
    t->path = follow_links(path);
    if (!t->path) return fail(t, err, errlen, path, "cannot follow the link");
    if (exists) {
        /* A magic link of /proc (/dev/stdout ...) may name a file that has
         * no name any more: the name followed must be the file stat saw. */
        struct stat fin;
        if (lstat(t->path, &fin) != 0 || fin.st_dev != st.st_dev || fin.st_ino != st.st_ino) {
            errno = ENOENT;
            return fail(t, err, errlen, path, "cannot find the name of the file it leads to");
        }
    }
    char *dir = dir_of(t->path);
    if (!dir) { errno = ENOMEM; return fail(t, err, errlen, path, ""); }
    t->kind = TEMPFILE_ANONYMOUS;
    t->fd = open(dir, O_TMPFILE | O_RDWR | O_CLOEXEC, 0666);
    int saved = errno;
    free(dir);
    if (t->fd >= 0) return 0;
    if (saved != EOPNOTSUPP && saved != EISDIR && saved != EINVAL) {
        errno = saved;
        return fail(t, err, errlen, path, "cannot create");
    }
    t->kind = TEMPFILE_NAMED;
    if (open_named(t) != 0) return fail(t, err, errlen, path, "cannot create");
    return 0;
}

int tempfile_open_fd(tempfile *t, int fd, const char *name, int flags, char *err, size_t errlen)
{
    memset(t, 0, sizeof *t);
    t->fd = t->target_fd = t->slot = -1;
    t->path = strdup(name);
    if (!t->path) { errno = ENOMEM; return fail(t, err, errlen, name, ""); }
    int target = fcntl(fd, F_DUPFD_CLOEXEC, 3);
    if (target < 0) return fail(t, err, errlen, name, "cannot write");
    return attach(t, target, flags, name, err, errlen);
}

/* ---- committing ---- */

static void release(tempfile *t)
{
    if (t->fd >= 0) close(t->fd);
    if (t->target_fd >= 0) close(t->target_fd);
    free(t->path);
    free(t->tmp_path);
    t->fd = t->target_fd = t->slot = -1;
    t->path = t->tmp_path = NULL;
}

/* Gives the nameless file fd the name dst: through /proc/self/fd (any
 * user), else AT_EMPTY_PATH (needs CAP_DAC_READ_SEARCH). */
static int link_fd(int fd, const char *dst)
{
    char proc[64];
    snprintf(proc, sizeof proc, "/proc/self/fd/%d", fd);
    if (linkat(AT_FDCWD, proc, AT_FDCWD, dst, AT_SYMLINK_FOLLOW) == 0) return 0;
    if (errno == EEXIST) return -1;
    int saved = errno;
    if (linkat(fd, "", AT_FDCWD, dst, AT_EMPTY_PATH) == 0) return 0;
    if (errno != EEXIST) errno = saved;
    return -1;
}

/* The anonymous file under the target's name: linked when the name is free,
 * else linked to a random name beside it and renamed over it. */
static int place_anonymous(tempfile *t)
{
    if (link_fd(t->fd, t->path) == 0) return 0;
    if (errno != EEXIST) return -1;
    char *dir = dir_of(t->path), *stem = cut_base(t->path);
    const char *base = stem ? base_of(stem) : "";
    size_t len = (dir ? strlen(dir) : 0) + strlen(base) + sizeof "/..sheaf-" + SUFFIX_LETTERS;
    char *name = dir && stem ? malloc(len) : NULL;
    if (!name) { free(dir); free(stem); errno = ENOMEM; return -1; }
    int rc = -1;
    for (unsigned attempt = 0; attempt < ATTEMPTS; attempt++) {
        char prefix[PATH_MAX + 2];
        snprintf(prefix, sizeof prefix, "%s/.", dir);
        random_name(name, len, prefix, base, ".sheaf-", attempt);
        if (link_fd(t->fd, name) == 0) {
            rc = rename(name, t->path);
            if (rc != 0) {
                int saved = errno;
                unlink(name);
                errno = saved;
            }
            break;
        }
        if (errno != EEXIST) break;
    }
    int saved = errno;
    free(name);
    free(dir);
    free(stem);
    errno = saved;
    return rc;
}

static int write_all(int fd, const unsigned char *p, size_t n)
{
    while (n) {
        ssize_t w = write(fd, p, n);
        if (w < 0) {
            if (errno == EINTR) continue;
            return -1;
        }
        p += w;
        n -= (size_t)w;
    }
    return 0;
}

static int copy_scratch(tempfile *t)
{
    unsigned char *buf = malloc(COPY_BYTES);
    if (!buf) { errno = ENOMEM; return -1; }
    int rc = lseek(t->fd, 0, SEEK_SET) == 0 ? 0 : -1;
    while (rc == 0) {
        ssize_t n = read(t->fd, buf, COPY_BYTES);
        if (n < 0 && errno == EINTR) continue;
        if (n <= 0) { rc = n < 0 ? -1 : 0; break; }
        rc = write_all(t->target_fd, buf, (size_t)n);
    }
    free(buf);
    if (rc == 0 && close(t->target_fd) != 0) rc = -1;
    else if (rc != 0) {
        int saved = errno;
        close(t->target_fd);
        errno = saved;
    }
    t->target_fd = -1;
    return rc;
}

static void sync_dir(const char *path)
{
    char *dir = dir_of(path);
    if (!dir) return;
    int fd = open(dir, O_RDONLY | O_DIRECTORY | O_CLOEXEC);
    if (fd >= 0) {
        fsync(fd); /* the new name survives a power cut; a failure here loses no data */
        close(fd);
    }
    free(dir);
}

int tempfile_pushes(const tempfile *t)
{
    return t->kind == TEMPFILE_ANONYMOUS || t->kind == TEMPFILE_NAMED;
}

void tempfile_push(int fd, off_t *pushed, off_t at)
{
    if (at - *pushed < TEMPFILE_PUSH_BYTES) return;
    sync_file_range(fd, *pushed, at - *pushed, SYNC_FILE_RANGE_WRITE);
    *pushed = at;
}

int tempfile_commit(tempfile *t, char *err, size_t errlen)
{
    int rc = 0;
    if (t->kind == TEMPFILE_THROUGH) {
        rc = close(t->fd);
        t->fd = -1;
    } else if (t->kind == TEMPFILE_SCRATCH) {
        rc = copy_scratch(t);
    } else {
        rc = fsync(t->fd);
        if (rc == 0) {
            sigset_t old;
            block(&old); /* a handled signal cannot strike between link and rename */
            rc = t->kind == TEMPFILE_ANONYMOUS ? place_anonymous(t) : rename(t->tmp_path, t->path);
            int saved = errno;
            if (rc == 0) slot_set(t->slot, SLOT_FREE);
            unblock(&old);
            errno = saved;
        }
        if (rc == 0) {
            rc = close(t->fd);
            t->fd = -1;
            sync_dir(t->path);
        } else if (t->kind == TEMPFILE_NAMED) {
            int saved = errno;
            sigset_t old;
            block(&old);
            unlink(t->tmp_path);
            slot_set(t->slot, SLOT_FREE);
            unblock(&old);
            errno = saved;
        }
    }
    if (rc != 0) {
        int saved = errno;
        message_printf(err, errlen, "%s: cannot write: %s", t->path, strerror(saved ? saved : EIO));
        release(t);
        errno = saved;
        return -1;
    }
    release(t);
    return 0;
}

void tempfile_discard(tempfile *t)
{
    if (t->kind == TEMPFILE_NAMED && t->tmp_path) {
        sigset_t old;
        block(&old);
        unlink(t->tmp_path);
        slot_set(t->slot, SLOT_FREE);
        unblock(&old);
    }
    release(t);
}
