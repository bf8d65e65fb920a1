/* An LD_PRELOAD shim for the output tests: refuses O_TMPFILE as a file
 * system without it does (EOPNOTSUPP), so that sheaf takes its named
 * fallback ("<path>.tmp.XXXXXX", renamed at commit).  Built by
 * no_tmpfile_shim in tests/cli/common.sh. */
#define _GNU_SOURCE
#include <dlfcn.h>
#include <errno.h>
#include <fcntl.h>
#include <stdarg.h>
#include <sys/types.h>
#define WRAP(name)                                                              \
    int name(const char *path, int flags, ...)                                  \
    {                                                                           \
        static int (*real)(const char *, int, ...);                             \
        mode_t mode = 0;                                                        \
        va_list ap;                                                             \
        va_start(ap, flags);                                                    \
        if (flags & (O_CREAT | __O_TMPFILE)) mode = va_arg(ap, mode_t);         \
        va_end(ap);                                                             \
        if ((flags & O_TMPFILE) == O_TMPFILE) { errno = EOPNOTSUPP; return -1; } \
        if (!real) real = (int (*)(const char *, int, ...))dlsym(RTLD_NEXT, #name); \
        return real(path, flags, mode);                                         \
    }
WRAP(open)
WRAP(open64)
