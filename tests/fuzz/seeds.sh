#!/bin/sh
# Seed corpora for the fuzz harnesses, made at build time from the configs
# already kept in git (nothing is duplicated in the tree):
#
#   DIR/fuzz_config/  every configs/*.ini and tests/bad/*.ini as it is, and
#                     each tests/bad case with --set lines (tests/bad/README,
#                     lines 4+ of NAME.expect) as "CONFIG\0SET\0SET..."
#   DIR/fuzz_value/   every "PARAMETER = VALUE" line of those files as
#                     "DIGIT VALUE", the digit choosing the parameter in
#                     vg_param_id order (tests/fuzz/fuzz_value.c)
#
#   sh tests/fuzz/seeds.sh DIR      (run from the top of the tree)
set -eu
D=$1
rm -rf "$D/fuzz_config" "$D/fuzz_value"
mkdir -p "$D/fuzz_config" "$D/fuzz_value"

for f in configs/*.ini tests/bad/*.ini; do
    name=$(basename "$(dirname "$f")")-$(basename "$f" .ini)
    cp "$f" "$D/fuzz_config/$name"
    awk -v out="$D/fuzz_value/$name" '
        BEGIN { split("gap reorganization electronic_coupling huang_rhys mode temperature", key, " ")
                for (i = 1; i <= 6; i++) id[key[i]] = i - 1 }
        /^[ \t]*[a-z_]+[ \t]*=/ {
            k = $0; sub(/^[ \t]*/, "", k); sub(/[ \t]*=.*/, "", k)
            v = $0; sub(/^[^=]*=[ \t]*/, "", v)
            if (k in id) printf "%d%s", id[k], v > (out "-" NR)
        }' "$f"
done

for e in tests/bad/*.expect; do
    ini=${e%.expect}.ini
    [ -f "$ini" ] && [ "$(wc -l <"$e")" -ge 4 ] || continue
    out="$D/fuzz_config/bad-$(basename "$e" .expect)-set"
    cp "$ini" "$out"
    sed -n '4,$p' "$e" | while IFS= read -r s; do printf '\000%s' "$s"; done >>"$out"
done

# DIR/fuzz_modes/  every mode table of tests/data/modes/ as it is
#                  (tests/fuzz/fuzz_modes.c)
rm -rf "$D/fuzz_modes"
mkdir -p "$D/fuzz_modes"
cp tests/data/modes/*.csv "$D/fuzz_modes/"
