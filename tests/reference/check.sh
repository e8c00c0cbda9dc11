#!/usr/bin/env bash
# Regenerate the reference JSON files in a scratch directory and check that
# they are byte-identical to the committed ones.
#
# Usage (from the repository root):
#   bash tests/reference/check.sh
# Environment:
#   REF_VENV  reuse (or create) a virtual environment at this path instead of
#             a throw-away one in a temporary directory
#   PYTHON    interpreter used to create the venv (default: python3; must be 3.11)
set -euo pipefail

ref_dir="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
python="${PYTHON:-python3}"

work="$(mktemp -d)"
trap 'rm -rf "$work"' EXIT

# The pins in requirements.txt are for Python 3.11 (and generated_by records
# the interpreter version), so refuse anything else up front.
py_minor="$("$python" -c 'import sys; print("%d.%d" % sys.version_info[:2])')"
if [[ "$py_minor" != "3.11" ]]; then
    echo "check.sh: need Python 3.11 for the pinned requirements, got $py_minor ($python)" >&2
    exit 2
fi

venv="${REF_VENV:-$work/venv}"
if [[ ! -x "$venv/bin/python" ]]; then
    echo "check.sh: creating virtual environment at $venv"
    "$python" -m venv "$venv"
fi
echo "check.sh: installing $ref_dir/requirements.txt"
# Wheels only: no local compilation that could change numerical results.
"$venv/bin/pip" install --quiet --disable-pip-version-check --only-binary=:all: \
    -r "$ref_dir/requirements.txt"

out="$work/out"
mkdir -p "$out"
"$venv/bin/python" "$ref_dir/gen_metrics.py" "$out"
"$venv/bin/python" "$ref_dir/gen_agreement.py" "$out"
"$venv/bin/python" "$ref_dir/gen_pool_bias.py" "$out"
"$venv/bin/python" "$ref_dir/gen_reviewer_quality.py" "$out"
"$venv/bin/python" "$ref_dir/gen_ppi.py" "$out"
"$venv/bin/python" "$ref_dir/gen_ppi_study.py" "$out"
"$venv/bin/python" "$ref_dir/gen_rbp.py" "$out"

status=0
for name in metrics_expected.json agreement_expected.json pool_bias_expected.json \
    reviewer_quality_expected.json ppi_expected.json ppi_study_expected.json \
    rbp_expected.json; do
    if [[ ! -f "$ref_dir/$name" ]]; then
        echo "check.sh: FAIL: committed file $ref_dir/$name is missing" >&2
        status=1
    elif cmp -s "$ref_dir/$name" "$out/$name"; then
        echo "check.sh: ok: $name is byte-identical"
    elif "$venv/bin/python" "$ref_dir/same_values.py" "$ref_dir/$name" "$out/$name"; then
        # numpy picks its summation kernels by CPU (SIMD width), so the last bit of a
        # float can differ between machines; the structure and every other value must not.
        echo "check.sh: ok: $name has the same values (floats within 1e-12 relative)"
    else
        echo "check.sh: FAIL: regenerated $name differs from the committed one (first lines of the diff):" >&2
        diff -u "$ref_dir/$name" "$out/$name" | head -n 40 >&2 || true
        status=1
    fi
done

if [[ $status -ne 0 ]]; then
    echo "check.sh: reference values are out of date or not reproducible" >&2
fi
exit $status
