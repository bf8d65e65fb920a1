/* tempfile: see tempfile.h. */
#include "summary/tempfile.h"

#include <errno.h>
#include <fcntl.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/random.h>
#include <time.h>
#include <unistd.h>

#define SUFFIX_LETTERS 6
#define ATTEMPTS 100

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

int tempfile_create(const char *path, char **tmp_path)
{
    static const char LETTERS[] = "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789";
    *tmp_path = NULL;
    size_t len = strlen(path) + sizeof ".tmp." + SUFFIX_LETTERS;
    char *name = malloc(len);
    if (!name) { errno = ENOMEM; return -1; }
    for (unsigned attempt = 0; attempt < ATTEMPTS; attempt++) {
        uint64_t r = random_bits(attempt);
        char suffix[SUFFIX_LETTERS + 1];
        for (int i = 0; i < SUFFIX_LETTERS; i++, r /= sizeof LETTERS - 1)
            suffix[i] = LETTERS[r % (sizeof LETTERS - 1)];
        suffix[SUFFIX_LETTERS] = '\0';
        snprintf(name, len, "%s.tmp.%s", path, suffix);
        int fd = open(name, O_RDWR | O_CREAT | O_EXCL | O_CLOEXEC, 0666);
        if (fd >= 0) { *tmp_path = name; return fd; }
        if (errno != EEXIST) break;
    }
    int saved = errno;
    free(name);
    errno = saved;
    return -1;
}
