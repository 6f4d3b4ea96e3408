"""Golden files hold across machines and numpy/BLAS builds (the tolerance in golden_compare).

Proved two ways: the golden texts themselves with the last digits of every computed number
perturbed still match, while a change a reader could see does not; and the sample project run
with every linear solve perturbed in its last bits (what another BLAS build does) still
renders its golden reports.
"""

from __future__ import annotations

import os
import random

import numpy as np
import pytest

from conftest import REPO
from golden_compare import NUMBER, difference, numbers_match
from test_report_handmade import GOLDEN, check_golden

GOLDEN_FILES = sorted(p.name for p in GOLDEN.iterdir() if p.is_file())


def test_number_rule():
    # the two values of the same JSON float seen on two numpy/BLAS builds
    assert numbers_match("34.90149583164114", "34.901495831641114")
    assert numbers_match("32.9078878900238", "32.90788789002379")
    assert numbers_match("46.1", "46.0")             # one rounding flip on display
    assert not numbers_match("46.2", "46.0")         # two units: a real change
    assert not numbers_match("34.90149", "34.90151")
    assert not numbers_match("11", "12")             # integers and counts exactly
    assert numbers_match("1.5e-09", "1.6e-09")
    assert not numbers_match("1.5e-09", "1.5e-08")


def test_digits_inside_words_are_not_numbers():
    assert NUMBER.findall("R11 U2A fp3 7c1d-0000 46.1 dB -0.5 V") == ["0000", "46.1", "-0.5"]
    assert difference("R11 is 10 k", "R12 is 10 k") is not None


def _perturb_last_digit(token: str, rng: random.Random) -> str:
    mantissa, e, exp = token.partition("e") if "e" in token else token.partition("E")
    digits = [c for c in mantissa if c.isdigit()]
    if "." not in mantissa or len(digits) < 10:
        return token                  # only full-precision floats get machine noise
    last = int(mantissa[-1])
    new = (last + rng.choice((-1, 1))) % 10
    return mantissa[:-1] + str(new) + e + exp


@pytest.mark.parametrize("name", GOLDEN_FILES)
def test_golden_holds_with_last_digits_perturbed(name):
    text = (GOLDEN / name).read_text(encoding="utf-8")
    rng = random.Random(name)
    perturbed = NUMBER.sub(lambda m: _perturb_last_digit(m.group(), rng), text)
    assert difference(perturbed, text) is None


@pytest.mark.parametrize("name", GOLDEN_FILES)
def test_golden_catches_a_visible_change(name):
    text = (GOLDEN / name).read_text(encoding="utf-8")
    floats = [m for m in NUMBER.finditer(text) if "." in m.group() and "e" not in m.group()]
    assert floats, f"{name} shows no computed number"
    m = floats[len(floats) // 2]
    decimals = len(m.group().partition(".")[2])
    # three units in the last digit shown (more than a rounding flip), at least 1e-6 relative
    value = float(m.group())
    shown = f"{value + max(3 * 10.0 ** -decimals, 1e-6 * abs(value)):.{decimals}f}"
    changed = text[:m.start()] + shown + text[m.end():]
    assert difference(changed, text) is not None
    reworded = text.replace("e", "a", 1)
    assert difference(reworded, text) is not None


def _noisy_solve(real):
    """numpy.linalg.solve with each result element moved by a few units in the last place,
    as a different LAPACK/BLAS build moves it."""
    rng = np.random.default_rng(7)

    def solve(a, b):
        x = real(a, b)
        ulps = rng.integers(-4, 5, size=np.shape(x))
        return x * (1.0 + ulps * np.finfo(float).eps)
    return solve


def test_sample_golden_holds_under_blas_noise(monkeypatch):
    from frontcheck.pipeline import RunOptions, run
    from frontcheck.report import FORMATS, render

    monkeypatch.setattr(np.linalg, "solve", _noisy_solve(np.linalg.solve))
    monkeypatch.chdir(REPO)
    rep = run(["sample_projects/shunt-monitor"], RunOptions(samples=2000, seed=1))
    rep.projects[0].root = str(REPO)
    exts = {"text": "txt", "json": "json", "sarif": "sarif", "markdown": "md", "html": "html"}
    assert set(exts) == set(FORMATS)
    if os.environ.get("FRONTCHECK_UPDATE_GOLDEN") == "1":
        pytest.skip("golden files are being rewritten from the exact run")
    noisy_json = render(rep, "json")
    # the noise reached the numbers: byte for byte the JSON differs from its golden file
    assert noisy_json != (GOLDEN / "shunt-monitor.json").read_text(encoding="utf-8")
    for fmt, ext in exts.items():
        check_golden(f"shunt-monitor.{ext}", render(rep, fmt))
