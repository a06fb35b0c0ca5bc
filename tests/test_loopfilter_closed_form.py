"""The run-time closed forms of the loop-filter formulas against their sympy derivation.

Reference: sympy (computer algebra) -- the derivation in
``clockplan.loopfilter.symbolic`` (nodal analysis, the crossover condition, the
stationary point of C3), run once per test session (its functions are cached).
Each closed form in ``clockplan.loopfilter.closed_form`` is checked twice:

1. symbolically: the very function, called with sympy symbols (``lib=sympy``),
   returns an expression, and ``sympy.simplify(closed - derived)`` must be 0;
2. numerically: in floats at seeded random points of the design domain, against
   the derived expression evaluated with mpmath at 40 significant digits at the
   same inputs, to 1e-12 relative.

The derivation itself is checked against circuit theory elsewhere
(``test_loopfilter_design.py``, ``test_loopfilter_noise.py``: nodal analysis
with numpy.linalg, equipartition).
"""

from __future__ import annotations

import cmath
import doctest
import importlib
import math
import subprocess
import sys
from functools import lru_cache
from pathlib import Path

import mpmath
import numpy as np
import pytest
import sympy as sp

from clockplan.errors import ClockplanError
from clockplan.loopfilter import closed_form, symbolic
from clockplan.loopfilter.closed_form import COMPONENT_NAMES

ROOT = Path(__file__).resolve().parents[1]
REL = 1e-12
DIGITS = 40
POINTS = 200
RESISTOR_CASES = [(2, "r1"), (3, "r1"), (3, "r3")]


def _symbols(*names: str) -> list[sp.Symbol]:
    table = symbolic._symbols()
    return [table[name] for name in names]


@lru_cache(maxsize=None)
def _reference(expression: sp.Expr, arguments: tuple[str, ...]):
    """The derived expression as an mpmath function of ``arguments`` (floats are taken exactly)."""
    function = sp.lambdify(_symbols(*arguments), expression, modules="mpmath")

    def evaluate(*values: complex) -> mpmath.mpc:
        with mpmath.workdps(DIGITS):
            return mpmath.mpmathify(function(*(mpmath.mpmathify(v) for v in values)))

    return evaluate


def _worst_relative_error(pairs) -> float:
    """Largest ``|closed - exact| / |exact|`` over ``(closed, exact)`` pairs (exact in mpmath)."""
    worst = 0.0
    with mpmath.workdps(DIGITS):
        for closed, exact in pairs:
            worst = max(worst, float(abs(mpmath.mpmathify(closed) - exact) / abs(exact)))
    return worst


def _log_uniform(rng: np.random.Generator, low: float, high: float) -> float:
    return float(10 ** rng.uniform(math.log10(low), math.log10(high)))


def _design_points(order: int, seed: int) -> list[dict[str, float]]:
    """Seeded points where the design method works: crossover, time constants, loop constants.

    Drawn as the design draws them (``Tz = gamma / (w**2 (T1 + T3))``), kept
    when the phase margin lies between 1° and 89°, the domain of a passive design.
    """
    rng = np.random.default_rng(seed)
    points: list[dict[str, float]] = []
    while len(points) < POINTS:
        w = 2 * math.pi * _log_uniform(rng, 100.0, 10e6)
        t1 = _log_uniform(rng, 1e-2, 3.0) / w
        t3 = float(rng.uniform(0.05, 0.9)) * t1 if order == 3 else 0.0
        tz = float(rng.uniform(0.5, 2.0)) / (w**2 * (t1 + t3))
        margin = math.atan(w * tz) - math.atan(w * t1) - math.atan(w * t3)
        if not math.radians(1) < margin < math.radians(89):
            continue
        loop = {
            "icp": _log_uniform(rng, 1e-4, 1e-2),
            "kvco": _log_uniform(rng, 1e6, 300e6),
            "n": _log_uniform(rng, 4.0, 10e3),
        }
        a0 = closed_form.total_capacitance(loop["icp"], loop["kvco"], loop["n"], w, tz, t1, t3)
        points.append(dict(loop, w=w, t1=t1, t3=t3, tz=tz, a0=a0, a1=a0 * (t1 + t3), a2=a0 * t1 * t3))
    return points


def _random_parts(order: int, seed: int) -> list[tuple[float, ...]]:
    """Seeded parts anywhere in a wide range (not only designed filters): ohms and farads."""
    rng = np.random.default_rng(seed)
    ranges = {"r": (1.0, 1e6), "c": (1e-13, 1e-5)}
    return [
        tuple(_log_uniform(rng, *ranges[name[0]]) for name in COMPONENT_NAMES[order]) for _ in range(POINTS)
    ]


# --- 1. symbolic identity: closed form == derivation -------------------------------------


@pytest.mark.parametrize("order", [2, 3])
def test_impedance_coefficients_equal_the_derivation(order: int) -> None:
    derived = symbolic.impedance_coefficients(order)
    closed = closed_form.impedance_coefficients(order, *_symbols(*COMPONENT_NAMES[order]))
    for name, expression in zip(("a0", "a1", "a2", "tz"), closed):
        assert sp.simplify(expression - derived[name]) == 0, name


@pytest.mark.parametrize("order", [2, 3])
def test_phase_margin_equals_the_derivation(order: int) -> None:
    w, tz, t1, t3 = _symbols("w", "tz", "t1", "t3")
    closed = closed_form.phase_margin(w, tz, t1, *((t3,) if order == 3 else ()), lib=sp)
    assert sp.simplify(closed - symbolic.phase_margin_expression(order)) == 0


@pytest.mark.parametrize("order", [2, 3])
def test_total_capacitance_equals_the_derivation(order: int) -> None:
    icp, kvco, n, w, tz, t1, t3 = _symbols("icp", "kvco", "n", "w", "tz", "t1", "t3")
    closed = closed_form.total_capacitance(icp, kvco, n, w, tz, t1, *((t3,) if order == 3 else ()), lib=sp)
    assert sp.simplify(closed - symbolic.total_capacitance(order)) == 0


def test_peak_zero_time_constant_equals_the_derivation() -> None:
    w, t1 = _symbols("w", "t1")
    assert sp.simplify(closed_form.peak_zero_time_constant(w, t1) - symbolic.peak_zero_time_constant()) == 0


@pytest.mark.parametrize("order", [2, 3])
def test_component_values_equal_the_derivation(order: int) -> None:
    derived = symbolic.component_formulas(order)
    closed = closed_form.component_values(order, *_symbols("a0", "a1", "a2", "tz"), lib=sp)
    assert set(closed) == set(derived) == set(COMPONENT_NAMES[order])
    for name in COMPONENT_NAMES[order]:
        assert sp.simplify(closed[name] - derived[name]) == 0, name


@pytest.mark.parametrize(("order", "resistor"), RESISTOR_CASES)
def test_resistor_noise_transfer_equals_the_derivation(order: int, resistor: str) -> None:
    (s,) = _symbols("s")
    closed = closed_form.resistor_noise_transfer(order, resistor, s, *_symbols(*COMPONENT_NAMES[order]))
    assert sp.simplify(closed - symbolic.resistor_noise_transfer(order, resistor)) == 0


# --- 2. numeric agreement at seeded random points (floats against 40 digits) -------------


@pytest.mark.parametrize("order", [2, 3])
def test_design_formulas_match_the_derivation_at_random_points(order: int) -> None:
    points = _design_points(order, seed=20_240 + order)
    times = ("tz", "t1") + (("t3",) if order == 3 else ())
    margin = _reference(symbolic.phase_margin_expression(order), ("w",) + times)
    capacitance = _reference(symbolic.total_capacitance(order), ("icp", "kvco", "n", "w") + times)
    peak = _reference(symbolic.peak_zero_time_constant(), ("w", "t1"))

    def values(p: dict[str, float], names: tuple[str, ...]) -> list[float]:
        return [p[name] for name in names]

    extra = lambda p: (p["t3"],) if order == 3 else ()  # noqa: E731 - order 2 takes no T3
    checks = {
        "phase margin": [
            (closed_form.phase_margin(p["w"], p["tz"], p["t1"], *extra(p)), margin(*values(p, ("w",) + times)))
            for p in points
        ],
        "total capacitance": [
            (
                closed_form.total_capacitance(p["icp"], p["kvco"], p["n"], p["w"], p["tz"], p["t1"], *extra(p)),
                capacitance(*values(p, ("icp", "kvco", "n", "w") + times)),
            )
            for p in points
        ],
        "peak zero": [(closed_form.peak_zero_time_constant(p["w"], p["t1"]), peak(p["w"], p["t1"])) for p in points],
    }
    for name, pairs in checks.items():
        assert _worst_relative_error(pairs) <= REL, name


@pytest.mark.parametrize("order", [2, 3])
def test_component_values_match_the_derivation_at_random_points(order: int) -> None:
    points = _design_points(order, seed=31_000 + order)
    arguments = ("a0", "a1", "a2", "tz")
    formulas = symbolic.component_formulas(order)
    for name in COMPONENT_NAMES[order]:
        exact = _reference(formulas[name], arguments)
        pairs = [
            (closed_form.component_values(order, *(p[a] for a in arguments))[name], exact(*(p[a] for a in arguments)))
            for p in points
        ]
        assert _worst_relative_error(pairs) <= REL, name


@pytest.mark.parametrize("order", [2, 3])
def test_impedance_coefficients_match_the_derivation_at_random_points(order: int) -> None:
    names = COMPONENT_NAMES[order]
    derived = symbolic.impedance_coefficients(order)
    for index, coefficient in enumerate(("a0", "a1", "a2", "tz")):
        if derived[coefficient] == 0:  # a2 of order 2
            assert all(closed_form.impedance_coefficients(order, *parts)[index] == 0 for parts in _random_parts(2, 1))
            continue
        exact = _reference(derived[coefficient], names)
        pairs = [
            (closed_form.impedance_coefficients(order, *parts)[index], exact(*parts))
            for parts in _random_parts(order, seed=42_000 + order)
        ]
        assert _worst_relative_error(pairs) <= REL, coefficient


@pytest.mark.parametrize(("order", "resistor"), RESISTOR_CASES)
def test_resistor_noise_transfer_matches_the_derivation_at_random_points(order: int, resistor: str) -> None:
    names = COMPONENT_NAMES[order]
    exact = _reference(symbolic.resistor_noise_transfer(order, resistor), ("s",) + names)
    rng = np.random.default_rng(53_000 + order)
    pairs = []
    for parts in _random_parts(order, seed=54_000 + order):
        s = 2j * math.pi * _log_uniform(rng, 1.0, 1e9)
        pairs.append((closed_form.resistor_noise_transfer(order, resistor, s, *parts), exact(s, *parts)))
    assert _worst_relative_error(pairs) <= REL


def test_resistor_noise_transfer_takes_numpy_arrays() -> None:
    # The noise model evaluates a whole frequency grid at once; each element must
    # equal the scalar evaluation.
    parts = (820.0, 6.8e-9, 270e-12, 6.2e3, 39e-12)
    s = 2j * np.pi * np.geomspace(10.0, 1e8, 9)
    array = closed_form.resistor_noise_transfer(3, "r3", s, *parts)
    scalars = [closed_form.resistor_noise_transfer(3, "r3", complex(x), *parts) for x in s]
    np.testing.assert_allclose(array, scalars, rtol=1e-15)
    assert not any(cmath.isnan(x) for x in scalars)


# --- 3. the run-time path, its errors and its examples -----------------------------------


def test_the_board_analysis_does_not_import_sympy() -> None:
    # A fresh interpreter analyses the demo board with a designed loop filter
    # (design, snapping, response, resistor noise, jitter tree) without sympy.
    program = (
        "import sys\n"
        "from clockplan.analysis import analyze\n"
        "from clockplan.boardfile import load_board\n"
        "analysis = analyze(load_board('boards/sampling-receiver.toml'))\n"
        "import clockplan.loopfilter.onboard, clockplan.loopfilter.evaluate, clockplan.loopfilter.noise\n"
        "assert any(c.jitter is not None for c in analysis.consumers)\n"
        "print(sorted(m for m in sys.modules if m == 'sympy' or m.startswith('sympy.')))\n"
    )
    done = subprocess.run(
        [sys.executable, "-c", program], cwd=ROOT, capture_output=True, text=True, check=True, timeout=120
    )
    assert done.stdout.strip() == "[]"


@pytest.mark.parametrize(
    ("call", "key"),
    [
        (lambda: closed_form.component_values(4, 1.0, 1.0, 1.0, 1.0), "order"),
        (lambda: closed_form.impedance_coefficients(1, 1.0, 1.0), "order"),
        (lambda: closed_form.resistor_noise_transfer(2, "r3", 1j, 1.0, 1.0, 1.0), "r3"),
        (lambda: closed_form.resistor_noise_transfer(3, "c1", 1j, 1.0, 1.0, 1.0, 1.0, 1.0), "c1"),
    ],
)
def test_misuse_raises_located_errors(call, key: str) -> None:
    with pytest.raises(ClockplanError) as caught:
        call()
    assert caught.value.key == key and caught.value.hint


@pytest.mark.parametrize("name", ["clockplan.loopfilter.closed_form", "clockplan.loopfilter.symbolic"])
def test_docstring_examples(name: str) -> None:
    module = importlib.import_module(name)
    failed, attempted = doctest.testmod(module)
    assert failed == 0 and attempted > 0
