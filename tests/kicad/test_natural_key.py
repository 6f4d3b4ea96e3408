"""The fast sort key of net and reference names orders exactly as KiCad's natural compare.

The comparison (frontcheck.kicad.connectivity.natural_compare) is the one checked against
KiCad 9's netlists in test_kicad9_oracle.py and test_corpus_netlists.py; the key that replaces
it for speed must give the same order on every string it is used for, and the comparison
itself must be kept for strings outside its domain (non-ASCII digits, NUL).
"""

from functools import cmp_to_key

from hypothesis import given, settings
from hypothesis import strategies as st

from frontcheck.kicad.connectivity import (_natural_key, natural_compare, natural_key_for,
                                           net_sort_key)

# Characters around the digit range and the separators KiCad net names use.
ASCII_NAMES = st.text(alphabet="0123456789/._-+~{}()[]aAzZ \x01\x7f", max_size=10)


@settings(max_examples=3000, deadline=None)
@given(ASCII_NAMES, ASCII_NAMES)
def test_key_agrees_with_compare_pairwise(a, b):
    ka, kb = _natural_key(a), _natural_key(b)
    assert natural_compare(a, b) == (ka > kb) - (ka < kb)


@settings(max_examples=300, deadline=None)
@given(st.lists(ASCII_NAMES, max_size=60))
def test_sorted_order_is_the_same(names):
    assert sorted(names, key=natural_key_for(names)) == sorted(names, key=cmp_to_key(natural_compare))


def test_leading_zeros_and_digit_runs():
    # KiCad orders digit runs by value: R2 before R10; '01' and '1' compare equal, so a stable
    # sort keeps their input order (from memory of KiCad's StrNumCmp, and natural_compare).
    names = ["R10", "R2", "R01", "R1", "/x/N$3", "/x/N$20"]
    assert sorted(names, key=natural_key_for(names)) == ["/x/N$3", "/x/N$20", "R01", "R1", "R2", "R10"]


def test_other_digits_and_nul_use_the_comparison():
    # Unicode digits (str.isdigit) and NUL have their own rules in the comparison.
    assert natural_key_for(["R\u00b2", "R1"]) is net_sort_key
    assert natural_key_for(["a\0", "a"]) is net_sort_key
    assert natural_key_for(["R1", "C2"]) is _natural_key
