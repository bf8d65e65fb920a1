#!/usr/bin/env bash
# `make help` lists the targets a user runs (install and uninstall are
# exercised by test_install.sh), and `make clean` removes what
# the build, the tests and the demo wrote (demo/out/), but not the benchmark
# tables (bench/out/, slow to make).  Checked with `make -n`, which prints
# the commands without running them.
cd "$(dirname "$0")/../.." || exit 1
. tests/cli/common.sh
T=$(mktemp -d "${TMPDIR:-/tmp}/sheaf-make.XXXXXX")
trap 'rm -rf "$T"' EXIT
command -v make >/dev/null || { skip all "make not found"; exit 0; }

make -s --no-print-directory help >"$T/help" 2>&1 || fail help_runs "exit $?"
for t in all deps demo test bench fuzz clean help shared man completion install uninstall; do
    if grep -Eq "^  $t( |$)" "$T/help"; then pass "help_lists_$t"; else fail "help_lists_$t" "not in make help"; fi
done
make -n --no-print-directory clean >"$T/clean" 2>&1 || fail clean_dry "exit $?"
check clean_removes_demo_out "make clean leaves demo/out: $(tr '\n' ' ' <"$T/clean")" \
    grep -q "demo/out" "$T/clean"
check clean_removes_build "make clean leaves build/" grep -Eq "rm -rf build( |$)" "$T/clean"
if grep -q "bench/out" "$T/clean"; then fail clean_keeps_bench_out "make clean removes bench/out"; else pass clean_keeps_bench_out; fi
