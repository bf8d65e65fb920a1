#!/usr/bin/env bash
# Output files get the mode a plain new file gets, and the process umask is
# not touched.  Reference: a file made by `touch` (coreutils, which creates
# with mode 0666 through the umask, as creat() does) under the same umask.
# Covers summary_write (scan, merge) and the sink (trim, plain and gzip).
set -u
cd "$(dirname "$0")/../.." || exit 0
SHEAF=${SHEAF_BIN:-./sheaf}
T=$(mktemp -d "${TMPDIR:-/tmp}/sheaf-modes.XXXXXX")
trap 'rm -rf "$T"' EXIT
. tests/cli/common.sh

printf 'a,b,c\n1,x,2.5\n2,y,3.5\n3,x,1.0\n' >"$T/in.csv"
printf 'a\nc\n' >"$T/keep.txt"

for mask in 022 027 077 002; do
    (
        umask $mask
        touch "$T/ref-$mask"
        "$SHEAF" scan -q "$T/in.csv" -o "$T/s-$mask.sheaf" &&
            "$SHEAF" merge "$T/s-$mask.sheaf" "$T/s-$mask.sheaf" --allow-duplicates -o "$T/m-$mask.sheaf" &&
            "$SHEAF" trim "$T/in.csv" --columns-from "$T/keep.txt" -o "$T/t-$mask.csv" &&
            "$SHEAF" trim "$T/in.csv" --columns-from "$T/keep.txt" -o "$T/t-$mask.csv.gz"
    ) >"$T/out" 2>"$T/err" || { fail "umask_$mask.commands" "$(err_text)"; continue; }
    want=$(stat -c %a "$T/ref-$mask")
    for pair in scan:s-$mask.sheaf merge:m-$mask.sheaf trim_plain:t-$mask.csv \
        trim_gzip:t-$mask.csv.gz; do
        got=$(stat -c %a "$T/${pair#*:}")
        check "umask_$mask.${pair%%:*}.mode_as_touch" "mode $got, touch gives $want" [ "$got" = "$want" ]
    done
done
# The library never sets the umask (it is process-wide: a set-and-restore
# races with every thread that creates a file).
hits=$(grep -rn --include='*.c' 'umask *(' src | head -n 3 | tr '\n' '|')
check sources.no_umask_call "umask() called: $hits" [ -z "$hits" ]
leftover=$(ls "$T" | grep -c '\.tmp\.')
check no_temporary_files_left "$leftover temporary files left in $T" [ "$leftover" -eq 0 ]
exit 0
