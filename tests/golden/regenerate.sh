#!/usr/bin/env bash
# Rewrites the golden CLI outputs from a fresh demo study. Run it only when a change of
# output is intended, and say why in the commit; `golden::cli_outputs_on_the_demo_match`
# compares every run of cases.txt with these files byte for byte.
set -euo pipefail
cd "$(dirname "$0")"
bin=${PLUMBLINE:-../../target/debug/plumbline}
scratch=$(mktemp -d)
trap 'rm -rf "$scratch"' EXIT
"$bin" demo --out "$scratch/demo.plumb" >/dev/null
grep -v '^#' cases.txt | while IFS=$'\t' read -r name args keep; do
    args=${args//STUDY/$scratch/demo.plumb}
    args=${args//OUT/$scratch}
    # shellcheck disable=SC2086
    "$bin" $args >"$scratch/stdout" 2>/dev/null
    if [ -n "$keep" ]; then
        cp "$scratch/${keep#> }" "$name.out"
    else
        cp "$scratch/stdout" "$name.out"
    fi
done
