"""Engineering values, tolerance/TCR notation and IEC 60063 tables.

Outside references: the SI prefixes (SI Brochure, 9th ed., BIPM 2019, table 7), the
IEC 60062 letter-as-decimal-point ("RKM") code [from memory], and the `eseries` package
(an independent implementation of the IEC 60063 tables) for every E-series entry.
"""

from __future__ import annotations

import math

import eseries
import pytest
from hypothesis import example, given, settings
from hypothesis import strategies as st

from frontcheck.circuit import Sourced
from frontcheck.errors import InputError
from frontcheck.netlist import Component, Location
from frontcheck.preferred_values import (
    E_SERIES, best_pair, best_single, nearest, neighbours, series_values,
)
from frontcheck.values import (
    IEC60062_TOLERANCE_CODES, ValueFieldError, capacitance_of, parse_tcr, parse_tolerance,
    parse_value, resistance_of, split_tolerance, tcr_of,
)

# ---------------------------------------------------------------------------- parse_value

# Expected values: SI prefixes per the SI Brochure (k = 1e3, M = 1e6, m = 1e-3, u/µ = 1e-6,
# n = 1e-9, p = 1e-12); "meg" = 1e6 as in SPICE (common practice); letter-as-decimal-point
# forms per IEC 60062 (from memory: 4k7 = 4.7 kOhm, 4R7 = 4.7 Ohm, R47 = 0.47 Ohm).
VALUE_CASES = [
    ("10k", 10e3), ("10K", 10e3), ("4k99", 4.99e3), ("4K7", 4.7e3), ("4R7", 4.7),
    ("R47", 0.47), ("0R", 0.0), ("0R2", 0.2), ("200R", 200.0), ("2M2", 2.2e6),
    ("1.5meg", 1.5e6), ("1MEG", 1e6), ("1M", 1e6), ("10m", 10e-3), ("10 kOhm", 10e3),
    ("10kohms", 10e3), ("10k\u03a9", 10e3), ("10k\u2126", 10e3), ("8.2k\u03a9", 8.2e3),
    ("1e3", 1e3), ("1E3", 1e3), ("2.2e-6", 2.2e-6), ("100n", 100e-9), ("100nF", 100e-9),
    ("100NF", 100e-9), ("4n7", 4.7e-9), ("1n5", 1.5e-9), ("1u", 1e-6), ("1U", 1e-6),
    ("1\u00b5", 1e-6), ("1\u03bcF", 1e-6), ("2u2", 2.2e-6), ("22pF", 22e-12), ("0.1uF", 0.1e-6),
    ("619", 619.0), ("5.1K", 5.1e3), (".5k", 500.0), ("4,7k", 4.7e3), ("2.5 V", 2.5),
    ("-10 V", -10.0), ("+5V", 5.0), ("20mV", 20e-3), ("  10k  ", 10e3),
]


@pytest.mark.parametrize("text,expected", VALUE_CASES)
def test_parse_value(text, expected):
    assert parse_value(text) == pytest.approx(expected, rel=1e-12, abs=0.0)


def test_parse_value_is_correctly_rounded():
    # Built from decimal text: '4n7' must be the float nearest 4.7e-9 (4.7 * 1e-9 is not).
    assert parse_value("4n7") == float("4.7e-9")
    assert parse_value("100n") == float("1e-7")
    assert parse_value("4k7") == 4700.0


@pytest.mark.parametrize("text,fragment", [
    ("0.1%", "percentage"), ("1 %", "percentage"), ("", "empty"), ("R", "cannot read"),
    ("RG", "cannot read"), ("DNF", "cannot read"), ("10k 0603", "cannot read"),
    ("1..4", "cannot read"), ("1f", "ambiguous"), ("1,000", "ambiguous"),
    ("10kR", "decimal mark"), ("4R7\u03a9", "unit after"), ("abc", "cannot read"),
])
def test_parse_value_rejects(text, fragment):
    with pytest.raises(ValueError) as e:
        parse_value(text)
    assert fragment in str(e.value)
    if text.strip():
        assert repr(text)[1:-1] in str(e.value) or text in str(e.value)


def test_parse_value_unit_must_agree():
    assert parse_value("100nF", unit="F") == pytest.approx(100e-9)
    assert parse_value("4R7", unit="ohm") == pytest.approx(4.7)
    assert parse_value("10k", unit="ohm") == 10e3          # no unit written: accepted
    with pytest.raises(ValueError, match="expected ohm"):
        parse_value("100nF", unit="ohm")
    with pytest.raises(ValueError, match="expected F"):
        parse_value("4R7", unit="F")


@settings(max_examples=300, deadline=None)
@given(mant=st.integers(1, 999), exp=st.integers(-12, 9))
def test_parse_value_round_trips_prefixes(mant, exp):
    # Any number written with an SI prefix reads back as number * 10**prefix (SI Brochure).
    prefixes = {-12: "p", -9: "n", -6: "u", -3: "m", 0: "", 3: "k", 6: "M", 9: "G"}
    p = 3 * (exp // 3)
    text = f"{mant}{prefixes[p]}"
    assert parse_value(text) == pytest.approx(mant * 10.0 ** p, rel=1e-12)


# ---------------------------------------------------------------------------- tolerance

@pytest.mark.parametrize("text,expected", [
    ("1%", 0.01), ("0.1%", 0.001), ("0.1 %", 0.001), ("\u00b10.5%", 0.005),
    ("+/-0.5 %", 0.005), ("+-2%", 0.02), ("5 %", 0.05), ("0,1%", 0.001),
])
def test_parse_tolerance(text, expected):
    assert parse_tolerance(text) == pytest.approx(expected)


# IEC 60062 letter codes - from memory (docs/engineering.md section 8 marks them unconfirmed):
# B 0.1 %, C 0.25 %, D 0.5 %, F 1 %, G 2 %, J 5 %, K 10 %.
@pytest.mark.parametrize("code,percent", [
    ("B", 0.1), ("C", 0.25), ("D", 0.5), ("F", 1), ("G", 2), ("J", 5), ("K", 10),
])
def test_iec60062_letter_codes(code, percent):
    assert parse_tolerance(code) == pytest.approx(percent / 100)
    assert IEC60062_TOLERANCE_CODES[code] == pytest.approx(percent / 100)


@pytest.mark.parametrize("text,fragment", [
    ("1", "no % sign"), ("0.01", "no % sign"), ("+10/-20%", "cannot read"),
    ("X", "cannot read"), ("b", "cannot read"), ("150%", "outside"), ("", "cannot read"),
])
def test_parse_tolerance_rejects(text, fragment):
    with pytest.raises(ValueError, match=fragment):
        parse_tolerance(text)


@pytest.mark.parametrize("text,value,tol", [
    ("10k 0.1%", "10k", 0.001), ("10k/1%", "10k", 0.01), ("10k 1 %", "10k", 0.01),
    ("10k+/-0.1%", "10k", 0.001), ("4.02k+/-0.1%", "4.02k", 0.001), ("1M/1%", "1M", 0.01),
    ("200/1%", "200", 0.01), ("10k \u00b10.5%", "10k", 0.005), ("10k", "10k", None),
    ("4k99", "4k99", None), ("0.1%", "0.1%", None),
])
def test_split_tolerance(text, value, tol):
    v, t = split_tolerance(text)
    assert v == value
    assert t == (None if tol is None else pytest.approx(tol))


@pytest.mark.parametrize("text,per_kelvin", [
    ("25ppm", 25e-6), ("25 ppm/K", 25e-6), ("\u00b150 ppm/\u00b0C", 50e-6), ("10PPM/K", 10e-6),
])
def test_parse_tcr(text, per_kelvin):
    assert parse_tcr(text) == pytest.approx(per_kelvin)


@pytest.mark.parametrize("text", ["25", "25%", "ppm", "25 ppm/V"])
def test_parse_tcr_rejects(text):
    with pytest.raises(ValueError, match="TCR"):
        parse_tcr(text)


# ---------------------------------------------------------------------------- components

def _r(value, **fields):
    return Component(ref="R7", value=value, lib_id="Device:R",
                     fields={"Value": value, **fields},
                     location=Location("amp.kicad_sch", 42))


def test_resistance_from_value_and_default():
    ohms, tol = resistance_of(_r("4k99"), 0.01, "profile")
    assert ohms == Sourced(4990.0, "value", "value string '4k99'")
    assert tol == Sourced(0.01, "default", "profile default")
    # a configuration's own wording of the default is said once
    assert resistance_of(_r("4k99"), 0.01, "default 1 % (built-in)")[1].detail == "built-in default"


def test_resistance_tolerance_in_value_string():
    ohms, tol = resistance_of(_r("10k 0.1%"), 0.01)
    assert ohms.value == 10e3
    assert tol == Sourced(0.001, "value", "value string '10k 0.1%'")


def test_resistance_tolerance_field_wins_and_letter_code():
    _, tol = resistance_of(_r("10k", Tolerance="0.1%"), 0.01)
    assert tol == Sourced(0.001, "field", "Tolerance field")
    _, tol = resistance_of(_r("10k", Tol="F"), 0.05)
    assert (tol.value, tol.source, tol.detail) == (pytest.approx(0.01), "field", "Tol field")
    # same tolerance in both places is fine; the field is named as the source
    _, tol = resistance_of(_r("10k 0.1%", Tolerance="0.1 %"), 0.01)
    assert tol.source == "field"


def test_resistance_conflicting_tolerances_are_an_input_error():
    with pytest.raises(ValueFieldError) as e:
        resistance_of(_r("10k 0.1%", Tolerance="1%"), 0.01)
    assert isinstance(e.value, InputError)
    assert (e.value.file, e.value.line, e.value.ref) == ("amp.kicad_sch", 42, "R7")
    assert "1 %" in e.value.message and "0.1 %" in e.value.message


@pytest.mark.parametrize("value,fields,field_name", [
    ("RG", {}, "Value"), ("100nF", {}, "Value"), ("10k", {"Tolerance": "1"}, "Tolerance"),
    ("-10k", {}, "Value"),
])
def test_resistance_bad_fields_name_file_line_field_and_example(value, fields, field_name):
    with pytest.raises(ValueFieldError) as e:
        resistance_of(_r(value, **fields), 0.01)
    err = e.value
    assert err.file == "amp.kicad_sch" and err.line == 42 and err.field_name == field_name
    assert field_name in err.message and "R7" in err.message
    assert err.hint and "'" in err.hint          # shows an example of a good value
    assert "amp.kicad_sch:42" in err.render()


def test_capacitance_and_tcr():
    c = Component(ref="C3", value="4n7", fields={"Value": "4n7", "Tolerance": "5%", "TC": "30ppm"})
    farads, tol = capacitance_of(c, 0.1)
    assert farads.value == pytest.approx(4.7e-9) and tol.value == pytest.approx(0.05)
    assert tcr_of(c) == Sourced(pytest.approx(30e-6), "field", "TC field")
    assert tcr_of(_r("10k")) is None
    with pytest.raises(ValueFieldError):
        tcr_of(_r("10k", TCR="fast"))
    with pytest.raises(ValueFieldError, match="expected F"):
        capacitance_of(_r("10k\u03a9"), 0.1)


# ---------------------------------------------------------------------------- E-series

def test_tables_equal_eseries_package():
    # `eseries` (independent implementation of IEC 60063) as the oracle for every entry.
    for name, table in E_SERIES.items():
        ref = eseries.series(getattr(eseries, name))
        assert tuple(table) == tuple(ref), name
        assert len(table) == int(name[1:])


def test_irregular_values_survive():
    # IEC 60063: E24 keeps 27..47 and 82 off the formula round(10**(i/24)); E192 has 920.
    formula24 = [round(10 * 10 ** (i / 24)) for i in range(24)]
    off = sorted(v for v, f in zip(E_SERIES["E24"], formula24) if v != f)
    assert off == [27, 30, 33, 36, 39, 43, 47, 82]
    assert 920 in E_SERIES["E192"] and 919 not in E_SERIES["E192"]
    # E96 = every second E192 value, E48 every fourth (IEC 60063 construction)
    assert E_SERIES["E96"] == E_SERIES["E192"][::2]
    assert E_SERIES["E48"] == E_SERIES["E192"][::4]


@settings(max_examples=400, deadline=None)
@given(value=st.floats(min_value=0.2, max_value=9e8, allow_nan=False),
       name=st.sampled_from(list(E_SERIES)))
def test_nearest_by_difference_matches_eseries(value, name):
    ours = nearest(value, name, by="difference")
    ref = eseries.find_nearest(getattr(eseries, name), value)
    lo, hi = neighbours(value, name)
    if math.isclose(value - lo, hi - value, rel_tol=1e-9):
        return   # an exact tie; the two libraries may break it differently
    assert ours == pytest.approx(ref, rel=1e-12)


@settings(max_examples=300, deadline=None)
@given(value=st.floats(min_value=0.2, max_value=9e8, allow_nan=False),
       name=st.sampled_from(list(E_SERIES)))
def test_neighbours_match_eseries(value, name):
    key = getattr(eseries, name)
    lo, hi = neighbours(value, name)
    if lo == hi:
        assert math.isclose(lo, value, rel_tol=1e-9)
        assert eseries.find_nearest(key, value) == pytest.approx(lo, rel=1e-12)
    else:
        assert lo < value < hi
        assert lo == pytest.approx(eseries.find_less_than_or_equal(key, value), rel=1e-12)
        assert hi == pytest.approx(eseries.find_greater_than_or_equal(key, value), rel=1e-12)


def test_nearest_by_ratio_differs_from_difference_where_it_should():
    # 4.5k sits between E24 4.3k and 4.7k at equal difference (200 ohm; the tie goes low),
    # but 4.7/4.5 = 1.0444 is a smaller ratio than 4.5/4.3 = 1.0465, so by ratio it is 4.7k.
    assert nearest(4500, "E24") == 4700.0
    assert nearest(4500, "E24", by="difference") == 4300.0
    with pytest.raises(ValueError):
        nearest(-1, "E24")
    with pytest.raises(ValueError, match="unknown E-series"):
        nearest(1, "E7")


def series_of(value):
    """The series holding ``value``: those whose neighbours of it are the value itself."""
    return tuple(k for k in E_SERIES if neighbours(value, k)[0] == neighbours(value, k)[1])


def test_series_membership():
    # IEC 60063 tables: 47 is in E3..E24 and E192 (not E48/E96), 499 only in E96/E192, 464 in
    # E48 too, 920 only in E192.
    assert series_of(4700) == ("E3", "E6", "E12", "E24", "E192")
    assert series_of(4990) == ("E96", "E192")
    assert series_of(4640) == ("E48", "E96", "E192")
    assert series_of(9.2e3) == ("E192",)
    assert series_of(1234) == ()
    assert series_of(0.47) == ("E3", "E6", "E12", "E24", "E192")
    for v in series_values("E96", 1, 1e6):          # every E96 value is found in E96
        assert "E96" in series_of(v)
    assert len(series_values("E24", 1e3, 1e4)) == 25     # both ends inclusive


def test_series_values_match_eseries_erange():
    for name in E_SERIES:
        ours = series_values(name, 1.0, 1e6)
        ref = list(eseries.erange(getattr(eseries, name), 1.0, 1e6))
        assert ours == pytest.approx(ref, rel=1e-12)


def test_best_single_and_pair():
    s = best_single(12345, "E24")
    assert s.parts == (12000.0,) and s.error == pytest.approx(12000 / 12345 - 1)
    p = best_pair(12345, "E24")
    assert abs(p.error) < abs(s.error)
    assert p.ohms == pytest.approx(
        sum(p.parts) if p.how == "series" else 1 / sum(1 / x for x in p.parts))
    # 20k from E24 parts: 10k + 10k exactly (series preferred over 40k || 40k, not in E24)
    p = best_pair(20e3, "E24")
    assert (p.how, p.parts, p.error) == ("series", (10e3, 10e3), 0.0)


@settings(max_examples=60, deadline=None)
@given(target=st.floats(min_value=10.0, max_value=1e6), name=st.sampled_from(["E6", "E12", "E24"]))
@example(target=94001.0, name="E6")   # 47k + 47k: both parts just under target/2
@example(target=49.9995, name="E6")    # 100 || 100: both parts just above 2 x target
def test_best_pair_is_exhaustive(target, name):
    # Brute force over every pair of series values within the same span (x1000 either way).
    p = best_pair(target, name)
    vals = series_values(name, target / 1000, target * 1000)
    brute = min(min(abs((a + b) / target - 1), abs(a * b / (a + b) / target - 1))
                for i, a in enumerate(vals) for b in vals[i:])
    assert abs(p.error) <= brute * (1 + 1e-9) + 1e-15


def test_a_value_read_again_gives_the_same_and_an_unreadable_one_is_refused_each_time():
    from frontcheck.netlist import Component
    from frontcheck.values import resistance_of
    first = resistance_of(Component("R1", value="4k99 0.1%"), 0.01)
    again = resistance_of(Component("R2", value="4k99 0.1%", fields={"TOL": "0.1%"}), 0.01)
    assert (first[0].value, first[1].value) == (4990.0, 0.001) == (again[0].value, again[1].value)
    assert (first[1].source, again[1].source, again[1].detail) == ("value", "field", "TOL field")
    for ref in ("R3", "R4"):
        with pytest.raises(InputError, match=f"{ref}.*10 apples"):
            resistance_of(Component(ref, value="10 apples"), 0.01)
    # alike parts share the answer, which depends on the value, the tolerance field and default
    assert resistance_of(Component("R5", value="4k99 0.1%"), 0.01) == first
    assert resistance_of(Component("R6", value="10k"), 0.01)[1].value == 0.01
    assert resistance_of(Component("R6", value="10k"), 0.05)[1].value == 0.05
    assert resistance_of(Component("R6", value="10k"), 0.05, "frontcheck.toml")[1].detail == \
        "frontcheck.toml default"


def test_the_tolerance_field_is_found_in_any_case_the_last_of_one_name_counting():
    from frontcheck.netlist import Component
    from frontcheck.values import resistance_of
    cases = [({"tol": "5%", "TOL": "1%"}, 0.01, "TOL field"),
             ({"Tolerance": " ", "tol": "2%"}, 0.02, "tol field"),
             ({"TOLERANCE": "B", "Tol": "5%"}, 0.001, "TOLERANCE field"),
             ({"Tolerances": "5%"}, 0.03, "profile default")]
    for fields, tol, detail in cases:
        got = resistance_of(Component("R1", value="10k", fields=fields), 0.03)[1]
        assert (got.value, got.detail) == (tol, detail), fields
