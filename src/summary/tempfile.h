/* tempfile: a new file beside a final path, written and then renamed over it.
 *
 * tempfile_create makes "<path>.tmp.XXXXXX" (six random letters or digits)
 * with O_CREAT | O_EXCL and mode 0666, so the kernel filters the mode through
 * the process umask (and the directory's default ACL) exactly as it does for
 * a plain creat(): the file renamed into place gets the mode any other new
 * file of the process would.  mkstemp is not used: it creates mode 0600, and
 * restoring the usual mode needs the umask, which a process can only read by
 * setting it (umask() is process-wide, so a library calling it races with
 * every other thread that creates a file).  O_EXCL makes the name the
 * caller's alone; a name that exists is retried with new random letters.
 */
#ifndef SHEAF_TEMPFILE_H
#define SHEAF_TEMPFILE_H

/* Creates the temporary file for `path` and opens it for reading and
 * writing (O_RDWR | O_CLOEXEC: summary_write maps what it wrote to hash it).  Returns the descriptor and sets *tmp_path to its name (the
 * caller frees it, and unlinks or renames the file); -1 with errno set (and
 * *tmp_path NULL) when it cannot be created. */
int tempfile_create(const char *path, char **tmp_path);

#endif
