/* filehash: XXH3-64 over megabytes at a time (a summary file's section and
 * trailer checksums, a checkpoint's), through xxHash's run-time dispatch
 * where the installed library has it: the AVX2 or AVX-512 loop on a CPU
 * with them, the same hashes as plain XXH3 (which it is elsewhere).  Short
 * inputs (a label, a cell) keep plain XXH3: the dispatch is a call more.
 * The trailer checksum of the 500-column table's 43 MB summary took 7.6 ms
 * with the library's default loop (SSE2) and 3.9 ms so.  The input's raw
 * fingerprint (io/source.c) keeps the SSE2 loop: its translation unit
 * inlines xxHash (XXH_INLINE_ALL, for the state's layout), which makes the
 * dispatch declarations static there; it was 0.7% of a scan's samples. */
#ifndef SHEAF_FILEHASH_H
#define SHEAF_FILEHASH_H

#include <stddef.h>
#include <xxhash.h>

#if defined(__x86_64__) && defined(__has_include)
#if __has_include(<xxh_x86dispatch.h>)
#define XXH_DISPATCH_DISABLE_REPLACE
#include <xxh_x86dispatch.h>
#define SHEAF_FILEHASH_DISPATCH 1
#endif
#endif

static inline XXH64_hash_t filehash(const void *data, size_t len)
{
#ifdef SHEAF_FILEHASH_DISPATCH
    return XXH3_64bits_dispatch(data, len);
#else
    return XXH3_64bits(data, len);
#endif
}

static inline XXH_errorcode filehash_update(XXH3_state_t *state, const void *data, size_t len)
{
#ifdef SHEAF_FILEHASH_DISPATCH
    return XXH3_64bits_update_dispatch(state, data, len);
#else
    return XXH3_64bits_update(state, data, len);
#endif
}

#endif
