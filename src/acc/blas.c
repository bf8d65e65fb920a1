#include "acc/blas.h"

#include <cblas.h>
#include <pthread.h>
#include <stdlib.h>
#include <sys/mman.h>

static _Thread_local int ready;
/* One probe at a time: two threads must not both count the same free space. */
static pthread_mutex_t probing = PTHREAD_MUTEX_INITIALIZER;

int blas_thread_ready(void)
{
    if (ready) return 0;
    pthread_mutex_lock(&probing);
    /* mmap, as OpenBLAS takes its buffer: address space only, no page
     * touched, and no allocator in between (a sanitizer's malloc would
     * fill 136 MiB on every probe). */
    size_t bytes = BLAS_BUFFER_BYTES + BLAS_BUFFER_MARGIN;
    void *probe = mmap(NULL, bytes, PROT_READ | PROT_WRITE, MAP_PRIVATE | MAP_ANONYMOUS, -1, 0);
    if (probe != MAP_FAILED) {
        munmap(probe, bytes);
        double a = 0, c = 0;
        cblas_dsyrk(CblasColMajor, CblasUpper, CblasTrans, 1, 1, 1.0, &a, 1, 0.0, &c, 1);
        ready = 1;
    }
    pthread_mutex_unlock(&probing);
    return ready ? 0 : -1;
}

const char *blas_buffer_what(void)
{
    return "OpenBLAS's working buffer (128 MiB of address space per thread)";
}
