/* clones: the scan's hot loops compiled twice, for x86-64-v3 (AVX2, BMI2,
 * MOVBE: every x86-64 server CPU since about 2015) and for the baseline;
 * the copy is chosen once, when the program loads, by the CPU it runs on
 * (GCC's target_clones, an ifunc).
 *
 * Both copies compute the same bits: the build is ISO C (-std=c11) with
 * floating-point contraction off (-ffp-contract=off, stated in the Makefile
 * too), so no multiply-add is fused, and the compiler reorders no
 * floating-point sum without -ffast-math; the wider registers only carry
 * more lanes of the same element-wise operations.  tests/cli/test_clones.sh
 * compares the summaries of this build with those of the sanitized build,
 * compiled with SHEAF_NO_CLONES.
 *
 * GCC 12 or later on x86-64 only; elsewhere (Clang, other CPUs, or
 * -DSHEAF_NO_CLONES) SHEAF_HOT is empty and each function is compiled once. */
#ifndef SHEAF_CLONES_H
#define SHEAF_CLONES_H

#if defined(__x86_64__) && defined(__GNUC__) && !defined(__clang__) && __GNUC__ >= 12 && \
    !defined(SHEAF_NO_CLONES) && !defined(__SANITIZE_ADDRESS__) && !defined(__SANITIZE_THREAD__)
#define SHEAF_HOT __attribute__((target_clones("arch=x86-64-v3", "default")))
#define SHEAF_HAVE_CLONES 1
#else
#define SHEAF_HOT
#endif

#endif
