"""Exit 0 when two JSON files hold the same values: equal structure, keys, strings and
integers, and floats equal to within 1e-12 relative (numpy's CPU-dependent summation
order can change the last bit). Prints the first difference otherwise."""
import json
import math
import sys


def same(a, b, where):
    if isinstance(a, float) or isinstance(b, float):
        if isinstance(a, (int, float)) and isinstance(b, (int, float)):
            if math.isclose(a, b, rel_tol=1e-12, abs_tol=1e-15):
                return True
        print(f"same_values.py: {where}: {a!r} != {b!r}", file=sys.stderr)
        return False
    if type(a) is not type(b):
        print(f"same_values.py: {where}: {a!r} != {b!r}", file=sys.stderr)
        return False
    if isinstance(a, dict):
        if a.keys() != b.keys():
            print(f"same_values.py: {where}: keys differ", file=sys.stderr)
            return False
        return all(same(a[k], b[k], f"{where}.{k}") for k in a)
    if isinstance(a, list):
        if len(a) != len(b):
            print(f"same_values.py: {where}: lengths differ", file=sys.stderr)
            return False
        return all(same(x, y, f"{where}[{i}]") for i, (x, y) in enumerate(zip(a, b)))
    if a != b:
        print(f"same_values.py: {where}: {a!r} != {b!r}", file=sys.stderr)
        return False
    return True


with open(sys.argv[1]) as f:
    committed = json.load(f)
with open(sys.argv[2]) as f:
    regenerated = json.load(f)
sys.exit(0 if same(committed, regenerated, "$") else 1)
