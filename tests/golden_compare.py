"""Compare a rendered report with its golden file, numbers within a stated tolerance.

Golden files are written on one machine and read on every other one. A float computed through
numpy and a BLAS build can differ in its last bits between builds (a solve of the same matrix
gives 34.90149583164114 on one machine and 34.901495831641114 on another), so a byte-for-byte
compare fails for no engineering reason. The rule here, stated once:

* Text between numbers must be identical.
* Two numbers match when they are equal as written, or when both have a decimal point or an
  exponent (a computed float, not a count or a reference designator) and they differ by at
  most REL_TOL relative, or by at most one unit in the last digit written (the same value
  rounded the other way on display: 46.05 shown as "46.1" on one machine and "46.0" on
  another).

Integers and digits that are part of a word (R11, U2A, a fingerprint) must be equal as written.
"""

from __future__ import annotations

import math
import re

# 1e-9 relative: a thousand times coarser than BLAS noise (1e-15..1e-13), a million times finer
# than the least figure a report shows.
REL_TOL = 1e-9

NUMBER = re.compile(r"(?<![\w.])-?\d+(?:\.\d+)?(?:[eE][-+]?\d+)?(?![\w])")


def _is_float(token: str) -> bool:
    return "." in token or "e" in token.lower()


def _last_unit(token: str) -> float:
    """One unit in the last digit written: 46.1 -> 0.1, 3.2e-05 -> 1e-06."""
    mantissa, _, exp = token.lower().partition("e")
    decimals = len(mantissa.partition(".")[2])
    return 10.0 ** (-decimals + (int(exp) if exp else 0))


def numbers_match(a: str, b: str) -> bool:
    if a == b:
        return True
    if not (_is_float(a) and _is_float(b)):
        return False
    x, y = float(a), float(b)
    if math.isclose(x, y, rel_tol=REL_TOL, abs_tol=0.0):
        return True
    return abs(x - y) <= max(_last_unit(a), _last_unit(b)) * (1 + 1e-9)


def difference(actual: str, expected: str) -> str | None:
    """None when the two texts match under the rule above, else where they first differ."""
    parts_a = NUMBER.split(actual)
    parts_e = NUMBER.split(expected)
    nums_a = NUMBER.findall(actual)
    nums_e = NUMBER.findall(expected)
    offset = 0
    for i, (ta, te) in enumerate(zip(parts_a, parts_e)):
        if ta != te:
            k = next((j for j, (ca, ce) in enumerate(zip(ta, te)) if ca != ce), min(len(ta), len(te)))
            return f"text differs at character {offset + k}: {ta[k:k + 60]!r} vs {te[k:k + 60]!r}"
        offset += len(ta)
        if i < len(nums_a) and i < len(nums_e):
            if not numbers_match(nums_a[i], nums_e[i]):
                return f"number differs at character {offset}: {nums_a[i]} vs {nums_e[i]}"
            offset += len(nums_a[i])
    if len(parts_a) != len(parts_e):
        return f"{len(nums_a)} numbers vs {len(nums_e)} in the golden file"
    return None
