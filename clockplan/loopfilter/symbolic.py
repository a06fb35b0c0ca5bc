"""Symbolic derivation of the passive loop filter and the open-loop gain (sympy).

This is the source of truth for every loop-filter formula.  The run-time code
does not call it: the results are written out as plain closed forms in
:mod:`clockplan.loopfilter.closed_form`, and
``tests/test_loopfilter_closed_form.py`` checks each one against the
derivation here (symbolically, and numerically at random points).  sympy is
imported only inside the functions; each derivation runs once per process
(cached).

The networks (charge pump on the left, VCO tuning input on the right)::

    order 2:   Icp ──┬────────┬──── Vtune        order 3:  Icp ──┬────────┬──R3──┬── Vtune
                     C2       R1                                 C2       R1      C3
                     │        C1                                 │        C1      │
                    GND      GND                                GND      GND     GND

``R1`` in series with ``C1`` makes the stabilising zero, ``C2`` the first
high-frequency pole, and the ``R3``-``C3`` section an extra pole for
reference-spur attenuation.  (Banerjee's book names the same parts C2/R2 for
the zero branch and C1 for the shunt capacitor.)

Derivation, step by step:

1. Nodal analysis gives the trans-impedance ``Z(s) = Vtune / Icp``::

       Z(s) = (1 + s*Tz) / (s * (A2*s**2 + A1*s + A0)),   Tz = R1*C1

   with ``A0 = C1+C2+C3`` (total capacitance) and ``A1``, ``A2`` as
   :func:`impedance_coefficients` returns them (``C3 = R3 = 0`` for order 2).
2. Open-loop gain ``G(s) = Icp * Kvco * Z(s) / (N * s)``.  ``Icp`` is the
   charge-pump current in A and ``Kvco`` the VCO gain in **Hz/V**: the phase
   detector gives ``Icp / (2*pi)`` A per rad and the VCO ``2*pi*Kvco`` rad/s
   per V, so the two ``2*pi`` cancel.  ``s`` is in rad/s.
3. Writing ``A2*s**2 + A1*s + A0 = A0*(1 + s*T1)*(1 + s*T3)``, the phase
   margin at ``w`` is ``atan(w*Tz) - atan(w*T1) - atan(w*T3)`` and
   ``|G(jw)| = 1`` fixes ``A0`` (:func:`total_capacitance`).
4. The phase of ``G`` peaks where its derivative vanishes; for the
   second-order loop this gives ``Tz = 1 / (w**2 * T1)`` exactly
   (:func:`peak_zero_time_constant`).  The book's rule
   ``Tz = gamma / (wc**2 * (T1 + T3))`` generalises it to order 3
   (exact as ``T3 -> 0``), ``gamma = 1`` putting the peak at the crossover.
5. Inverting the coefficient map gives the components.  Order 2 has one
   solution; order 3 has five parts for four coefficients, and the free one
   (``C2``) is chosen to make ``C3`` as large as possible, so the VCO's own
   input capacitance disturbs the filter least.  ``dC3/dC2 = 0`` is solved
   symbolically (:func:`component_formulas`).
6. A noise voltage in series with a resistor reaches the tuning input through
   :func:`resistor_noise_transfer` (charge pump open).
"""

from __future__ import annotations

from functools import lru_cache
from typing import Any

from clockplan.loopfilter.closed_form import COMPONENT_NAMES

__all__ = [
    "COMPONENT_NAMES",
    "filter_impedance",
    "impedance_coefficients",
    "open_loop_gain",
    "phase_margin_expression",
    "total_capacitance",
    "peak_zero_time_constant",
    "component_formulas",
    "resistor_noise_transfer",
]


def _check_order(order: int) -> int:
    if order not in COMPONENT_NAMES:
        # Internal guard: user-facing callers validate the order first.
        raise ValueError(f"filter order must be 2 or 3, not {order!r}")
    return order


@lru_cache(maxsize=None)
def _symbols() -> dict[str, Any]:
    import sympy as sp

    names = "s w r1 c1 c2 r3 c3 icp kvco n a0 a1 a2 tz t1 t3 gamma"
    symbols = dict(zip(names.split(), sp.symbols(names)))
    positive = {k: sp.Symbol(k, positive=True) for k in names.split() if k != "s"}
    symbols.update(positive)
    return symbols


@lru_cache(maxsize=None)
def filter_impedance(order: int):
    """Return ``Z(s) = Vtune / Icp`` of the passive filter as a sympy expression.

    Derived by nodal analysis of the network drawn in the module docstring;
    the charge pump is an ideal current source and the VCO input draws no
    current.

    Examples
    --------
    >>> filter_impedance(2)
    (c1*r1*s + 1)/(s*(c1*c2*r1*s + c1 + c2))
    """
    import sympy as sp

    _check_order(order)
    sym = _symbols()
    s = sym["s"]
    v_pump, v_tune, i_pump = sp.symbols("v_pump v_tune i_pump")
    zero_branch = 1 / (sym["r1"] + 1 / (s * sym["c1"]))
    shunt = s * sym["c2"] * v_pump + zero_branch * v_pump
    if order == 2:
        equations = [sp.Eq(i_pump, shunt), sp.Eq(v_tune, v_pump)]
    else:
        through_r3 = (v_pump - v_tune) / sym["r3"]
        equations = [sp.Eq(i_pump, shunt + through_r3), sp.Eq(through_r3, s * sym["c3"] * v_tune)]
    solution = sp.solve(equations, [v_pump, v_tune], dict=True)[0]
    return sp.factor(sp.cancel(solution[v_tune] / i_pump), s)


@lru_cache(maxsize=None)
def resistor_noise_transfer(order: int, resistor: str):
    """Return ``Vtune / Vn`` for a noise voltage ``Vn`` in series with ``resistor``.

    The charge pump is open (no signal current), as in the open loop; the
    loop's own correction is applied afterwards through ``1 / (1 + G)``.

    Examples
    --------
    >>> resistor_noise_transfer(2, "r1")
    c1/(c1*c2*r1*s + c1 + c2)
    """
    import sympy as sp

    _check_order(order)
    if resistor not in ("r1", "r3") or (resistor == "r3" and order == 2):
        raise ValueError(f"no resistor {resistor!r} in an order-{order} filter")
    sym = _symbols()
    s = sym["s"]
    v_pump, v_tune, v_noise = sp.symbols("v_pump v_tune v_noise")
    source_r1 = v_noise if resistor == "r1" else 0
    # The series source lifts the R1 end of the zero branch by v_noise.
    zero_branch = (v_pump - source_r1) / (sym["r1"] + 1 / (s * sym["c1"]))
    total = s * sym["c2"] * v_pump + zero_branch
    if order == 2:
        equations = [sp.Eq(total, 0), sp.Eq(v_tune, v_pump)]
    else:
        source_r3 = v_noise if resistor == "r3" else 0
        through_r3 = (v_pump + source_r3 - v_tune) / sym["r3"]
        equations = [sp.Eq(total + through_r3, 0), sp.Eq(through_r3, s * sym["c3"] * v_tune)]
    solution = sp.solve(equations, [v_pump, v_tune], dict=True)[0]
    return sp.factor(sp.cancel(solution[v_tune] / v_noise), s)


@lru_cache(maxsize=None)
def impedance_coefficients(order: int) -> dict[str, Any]:
    """Return ``{"a0", "a1", "a2", "tz"}`` of ``Z(s)`` in terms of the components.

    ``Z(s) = (1 + s*tz) / (s * (a2*s**2 + a1*s + a0))``; ``a2`` is 0 for order 2.

    Examples
    --------
    >>> impedance_coefficients(2)["a1"]
    c1*c2*r1
    """
    import sympy as sp

    sym = _symbols()
    s = sym["s"]
    numerator, denominator = sp.fraction(sp.cancel(filter_impedance(order)))
    num_coeffs = sp.Poly(numerator, s).all_coeffs()  # [tz * k, k]
    den_coeffs = sp.Poly(sp.cancel(denominator / s), s).all_coeffs()
    scale = num_coeffs[-1]
    den_coeffs = [sp.cancel(c / scale) for c in den_coeffs]
    padded = [sp.Integer(0)] * (3 - len(den_coeffs)) + den_coeffs
    return {
        "a2": padded[0],
        "a1": padded[1],
        "a0": padded[2],
        "tz": sp.cancel(num_coeffs[0] / scale),
    }


@lru_cache(maxsize=None)
def open_loop_gain(order: int):
    """Return ``G(s) = Icp * Kvco * Z(s) / (N * s)`` (Kvco in Hz/V, s in rad/s).

    Examples
    --------
    >>> import sympy as sp
    >>> sp.degree(sp.fraction(sp.cancel(open_loop_gain(3)))[1], _symbols()["s"])
    4
    """
    sym = _symbols()
    return sym["icp"] * sym["kvco"] * filter_impedance(order) / (sym["n"] * sym["s"])


def _pole_zero_gain(order: int):
    """``G(j*w)`` written with time constants: ``K (1+jwTz) / ((jw)^2 A0 (1+jwT1)(1+jwT3))``."""
    import sympy as sp

    sym = _symbols()
    jw = sp.I * sym["w"]
    poles = (1 + jw * sym["t1"]) * ((1 + jw * sym["t3"]) if order == 3 else 1)
    k = sym["icp"] * sym["kvco"] / sym["n"]
    return k * (1 + jw * sym["tz"]) / (jw**2 * sym["a0"] * poles)


@lru_cache(maxsize=None)
def phase_margin_expression(order: int):
    """Return the phase margin ``pi + arg G(j*w)`` (radians) in time constants.

    Examples
    --------
    >>> phase_margin_expression(2)
    -atan(t1*w) + atan(tz*w)
    """
    import sympy as sp

    _check_order(order)
    sym = _symbols()
    jw = sp.I * sym["w"]

    def argument(factor):
        return sp.atan2(sp.im(factor), sp.re(factor))

    # arg of a product is the sum of args; each factor (1 + j*w*T) lies in the
    # right half-plane, so its arg is a plain arctangent.
    phase = argument(1 + jw * sym["tz"]) - argument(1 + jw * sym["t1"])
    if order == 3:
        phase -= argument(1 + jw * sym["t3"])
    # The remaining factor K / ((jw)^2 A0) is real and negative: -pi, cancelled by +pi.
    return sp.simplify(phase)


@lru_cache(maxsize=None)
def total_capacitance(order: int):
    """Return ``A0`` that makes ``|G(j*w)| = 1`` (the crossover condition).

    Examples
    --------
    >>> total_capacitance(2)
    icp*kvco*sqrt(tz**2*w**2 + 1)/(n*w**2*sqrt(t1**2*w**2 + 1))
    """
    import sympy as sp

    _check_order(order)
    sym = _symbols()
    gain = _pole_zero_gain(order)
    magnitude_squared = sp.simplify(gain * sp.conjugate(gain))
    roots = sp.solve(sp.Eq(magnitude_squared, 1), sym["a0"])
    (positive,) = [r for r in roots if r.is_positive]
    return sp.simplify(positive)


@lru_cache(maxsize=None)
def peak_zero_time_constant():
    """Return the ``Tz`` that puts the phase peak of the second-order loop at ``w``.

    Solves ``d(phase margin)/dw = 0`` for ``Tz``.

    Examples
    --------
    >>> peak_zero_time_constant()
    1/(t1*w**2)
    """
    import sympy as sp

    sym = _symbols()
    slope = sp.diff(phase_margin_expression(2), sym["w"])
    roots = sp.solve(sp.Eq(sp.together(slope), 0), sym["tz"])
    # Tz = T1 is the other root: zero and pole cancel and the phase is flat at 0.
    (root,) = [r for r in roots if sp.simplify(r - sym["t1"]) != 0]
    return root


@lru_cache(maxsize=None)
def component_formulas(order: int) -> dict[str, Any]:
    """Return the components in terms of ``a0, a1, a2, tz`` (the inverse coefficient map).

    For order 3 the free part ``c2`` is the root of ``d c3 / d c2 = 0`` for
    which all parts are positive (the largest possible ``c3``).

    Examples
    --------
    >>> sorted(component_formulas(2).items())
    [('c1', a0 - a1/tz), ('c2', a1/tz), ('r1', tz**2/(a0*tz - a1))]
    """
    import sympy as sp

    sym = _symbols()
    coefficients = impedance_coefficients(order)
    equations = [sp.Eq(sym[name], coefficients[name]) for name in ("a0", "a1", "tz")]
    if order == 2:
        unknowns = [sym["r1"], sym["c1"], sym["c2"]]
        (solution,) = sp.solve(equations, unknowns, dict=True)
        return {str(k): sp.simplify(v) for k, v in solution.items()}
    equations.append(sp.Eq(sym["a2"], coefficients["a2"]))
    unknowns = [sym["r1"], sym["c1"], sym["c3"], sym["r3"]]
    (solution,) = sp.solve(equations, unknowns, dict=True)
    c3_of_c2 = solution[sym["c3"]]
    stationary = sp.solve(sp.Eq(sp.diff(c3_of_c2, sym["c2"]), 0), sym["c2"])
    # C1 > 0 needs c2 * tz**2 > a2; sympy cannot see the sign of the square
    # root term, so test the roots at one feasible point (tz > t1 > t3):
    # a0 = 1, t1 = 1, t3 = 1/2, tz = 10.
    feasible = {sym["a0"]: 1, sym["a1"]: sp.Rational(3, 2), sym["a2"]: sp.Rational(1, 2), sym["tz"]: 10}
    (best_c2,) = [r for r in stationary if (r * sym["tz"] ** 2 - sym["a2"]).subs(feasible) > 0]
    formulas = {str(k): sp.simplify(v.subs(sym["c2"], best_c2)) for k, v in solution.items()}
    formulas["c2"] = sp.simplify(best_c2)
    return formulas
