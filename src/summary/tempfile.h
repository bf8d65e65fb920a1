/* tempfile: an output file that is whole or absent, never half written, and
 * never the cause of a file lying about after the process ends.
 *
 * What a target path gets (tempfile_open decides once, before any byte):
 *
 *   - a regular file, or nothing yet: the bytes go to a new file in the
 *     target's directory that has no name (O_TMPFILE), and tempfile_commit
 *     gives it the target's name: linkat(2) when the name is free, else
 *     linkat to a random name beside it and rename(2) over the target, so the
 *     target is the old complete file or the new complete file at every
 *     instant.  A process killed while writing, even by SIGKILL, leaves
 *     nothing (the kernel frees a file without a name when its last
 *     descriptor closes).  The one window: between that linkat and that
 *     rename (two system calls, with the cleanup signals blocked) a
 *     SIGKILL or a power cut leaves the random name ".NAME.sheaf-XXXXXX"
 *     (NAME cut to 200 bytes).
 *   - a regular file on a file system without O_TMPFILE (open fails with
 *     EOPNOTSUPP, EISDIR or EINVAL): a named file "<path>.tmp.XXXXXX" is
 *     created and renamed over the target.  Its name is recorded for a
 *     handler of SIGTERM, SIGINT, SIGHUP and SIGXFSZ that removes it and then dies of
 *     the same signal (so the exit status still says which).  The handler is
 *     installed only for a signal whose action is the default one, so a host
 *     program that handles these signals keeps its own handler (and its own
 *     cleanup); SIGKILL leaves the named file.
 *   - a symbolic link: followed (through any chain, relative links resolved
 *     from the link's directory) to the file it names, which is then handled
 *     as above; the link itself stays.  A dangling link names the file to
 *     create.
 *   - a descriptor of this process named through /proc (/dev/stdout,
 *     /dev/fd/N, /proc/self/fd/N, or links to them): written through that
 *     descriptor as tempfile_open_fd does (`-o -`), whatever it leads to, so
 *     an append or a redirection shared with other commands keeps what it
 *     holds, and a closed descriptor fails.
 *   - a character device or a FIFO (/dev/null, /dev/full, a named pipe):
 *     written through, in place, as a shell redirection would.  A caller that must seek or map what it
 *     writes (TEMPFILE_SEEKABLE) writes to a scratch file without a name
 *     (O_TMPFILE in $TMPDIR or /tmp, else memfd_create), copied to the
 *     target by tempfile_commit.
 *   - anything else (a directory, a block device, a socket): refused.
 *
 * A new file gets mode 0666 filtered by the process umask (and the
 * directory's default ACL), as a plain creat() would; a replaced file does
 * not keep its old mode.  The umask is never read (umask() is process-wide:
 * a library calling it races with every thread that creates a file).
 *
 * Global state: the names recorded for the signal handler (the named
 * fallback only) are the one process-wide table here, TEMPFILE_SLOTS
 * entries of atomic flags and fixed buffers, safe to use from any thread
 * and read by the handler without locks.  With every slot in use (or a name
 * longer than PATH_MAX) the file is still written, without the cleanup.
 */
#ifndef SHEAF_TEMPFILE_H
#define SHEAF_TEMPFILE_H

#include <stddef.h>
#include <sys/types.h>

enum {
    TEMPFILE_SEEKABLE = 1 /* the caller seeks, reads back or maps what it writes */
};

typedef enum {
    TEMPFILE_ANONYMOUS, /* O_TMPFILE in the target's directory, linked at commit */
    TEMPFILE_NAMED,     /* "<path>.tmp.XXXXXX", renamed at commit */
    TEMPFILE_THROUGH,   /* the target itself (a character device or a FIFO) */
    TEMPFILE_SCRATCH    /* a nameless scratch file, copied to the target at commit */
} tempfile_kind;

typedef struct {
    int fd;             /* where the caller writes (read and write, close-on-exec) */
    tempfile_kind kind; /* how the bytes reach the target */
    char *path;         /* the target with symbolic links followed */
    char *tmp_path;     /* TEMPFILE_NAMED: the temporary name; else NULL */
    int target_fd;      /* TEMPFILE_SCRATCH: the target, open for writing; else -1 */
    int slot;           /* the signal-cleanup slot of tmp_path, or -1 */
    int in_memory;      /* TEMPFILE_SCRATCH: a memory file, not one in $TMPDIR */
} tempfile;

/* Prepares the output for `path` (see above).  Returns 0 with t filled, or
 * -1 with errno set (ENOMEM when memory ran out) and a one-line message
 * naming the path in err; t then holds nothing to release. */
int tempfile_open(tempfile *t, const char *path, int flags, char *err, size_t errlen);

/* Prepares an output to the open descriptor fd (standard output for `-o -`),
 * which stays open (a duplicate is written and closed): a caller that must
 * seek or map what it writes (TEMPFILE_SEEKABLE) writes to a scratch file
 * without a name, copied to fd by tempfile_commit, so a failure before the
 * commit writes nothing to fd; else it writes through.  `name` names fd in
 * messages.  Returns 0, or -1 with errno set and a message in err. */
int tempfile_open_fd(tempfile *t, int fd, const char *name, int flags, char *err, size_t errlen);

/* Makes the written bytes the target's: fsync and the link or rename for a
 * regular file (and fsync of its directory), the copy for a scratch file.
 * Closes t->fd and releases t in every case.  Returns 0, or -1 with errno
 * set and a message naming the target in err, after which nothing is left
 * but the target as it was (a device or FIFO may have received part). */
int tempfile_commit(tempfile *t, char *err, size_t errlen);

/* Early writeback.  tempfile_commit fsyncs a regular file, and fsync waits
 * for every byte still only in memory: 20 ms for the 43 MB summary of the
 * 500-column benchmark table, all of it after the last byte is written.  A
 * writer that pushes what it wrote every TEMPFILE_PUSH_BYTES has the disk
 * write while it computes the rest, and the fsync waits for the last few MiB.
 *
 * tempfile_pushes: 1 when t is fsynced at commit (so pushing is worth it);
 * 0 for a device, a FIFO, or a scratch file that is copied and dropped.
 * tempfile_push: fd's bytes are written up to offset `at`; once
 * TEMPFILE_PUSH_BYTES or more of them lie past *pushed, starts their
 * writing to the disk without waiting for it (sync_file_range(2),
 * SYNC_FILE_RANGE_WRITE) and moves *pushed to at.  A failure is ignored:
 * the fsync still waits for every byte and reports. */
#define TEMPFILE_PUSH_BYTES (4 << 20)
int tempfile_pushes(const tempfile *t);
void tempfile_push(int fd, off_t *pushed, off_t at);

/* Drops everything written (closes, removes a named file) and releases t. */
void tempfile_discard(tempfile *t);

/* The descriptor of this process that path names (/dev/stdout, /dev/fd/N,
 * /proc/self/fd/N, /proc/PID/fd/N, or a chain of links to one of them), or
 * -1.  tempfile_open writes such a path through the descriptor. */
int tempfile_descriptor(const char *path);

/* For an error met while writing t: where the bytes were going when they
 * were not going to the target itself (a scratch file in $TMPDIR or /tmp,
 * or memory, for TEMPFILE_SCRATCH), as " (its scratch file in /tmp)", to
 * follow the target's name in the message; "" otherwise. */
void tempfile_where(const tempfile *t, char *buf, size_t len);

/* path with its symbolic links followed to the name they lead to (a new
 * string; the name need not exist), or NULL with errno set. */
char *tempfile_target(const char *path);

#endif
