"""The loop-filter formulas as plain closed forms: what the design and noise code evaluate.

:mod:`clockplan.loopfilter.symbolic` derives these results with sympy (nodal
analysis, the crossover condition, the stationary point of ``C3``); running
that derivation costs a second or more, so the results are written out here
once, in plain Python arithmetic and :mod:`math`.  Nothing here imports sympy
or numpy, so a board with a loop filter loads and analyses quickly.
``tests/test_loopfilter_closed_form.py`` checks every function against the
derivation, symbolically (``sympy.simplify(closed - derived) == 0``) and
numerically at random points against a 40-digit evaluation of the derived
expression.

The filter (see :mod:`clockplan.loopfilter.symbolic` for the drawing) has the
trans-impedance::

    Z(s) = (1 + s*Tz) / (s * (A2*s**2 + A1*s + A0))

and, written with time constants, ``A2*s**2 + A1*s + A0 = A0*(1 + s*T1)*(1 + s*T3)``.

Functions that take square roots or arctangents have a keyword ``lib``: the
module that provides ``sqrt`` and ``atan``.  It is :mod:`math` for numbers;
passing ``sympy`` (with sympy symbols as arguments) returns the same formula as
an expression, which is how the tests compare this code itself with the
derivation.  The others are plain arithmetic and accept floats, complex
numbers, numpy arrays or sympy symbols alike.
"""

from __future__ import annotations

import math
from types import ModuleType
from typing import Any

from clockplan.errors import ClockplanError

__all__ = [
    "COMPONENT_NAMES",
    "impedance_coefficients",
    "phase_margin",
    "total_capacitance",
    "peak_zero_time_constant",
    "component_values",
    "resistor_noise_transfer",
]

COMPONENT_NAMES: dict[int, tuple[str, ...]] = {
    2: ("r1", "c1", "c2"),
    3: ("r1", "c1", "c2", "r3", "c3"),
}


def _check_order(order: int) -> int:
    if order not in COMPONENT_NAMES:
        raise ClockplanError(f"loop filter order must be 2 or 3, not {order!r}", key="order", hint="use 2 or 3")
    return order


def impedance_coefficients(order: int, *components: Any) -> tuple[Any, Any, Any, Any]:
    """Return ``(A0, A1, A2, Tz)`` of ``Z(s)`` from the parts (in ``COMPONENT_NAMES[order]`` order).

    ``A0`` is the total capacitance; ``A2`` is 0 for order 2.

    Examples
    --------
    >>> a0, a1, a2, tz = impedance_coefficients(2, 1e3, 1e-9, 1e-10)
    >>> round(a0 * 1e9, 9), a2, round(tz * 1e6, 9)
    (1.1, 0.0, 1.0)
    """
    _check_order(order)
    if order == 2:
        r1, c1, c2 = components
        return c1 + c2, r1 * c1 * c2, 0.0, r1 * c1
    r1, c1, c2, r3, c3 = components
    a1 = r1 * c1 * (c2 + c3) + r3 * c3 * (c1 + c2)
    return c1 + c2 + c3, a1, r1 * r3 * c1 * c2 * c3, r1 * c1


def phase_margin(w: Any, tz: Any, t1: Any, t3: Any = 0, *, lib: ModuleType = math) -> Any:
    """Return the phase margin ``pi + arg G(j*w)`` in radians.

    ``atan(w*Tz) - atan(w*T1) - atan(w*T3)``; leave ``t3`` at 0 for order 2.

    Examples
    --------
    >>> round(math.degrees(phase_margin(1.0, 3.0, 1 / 3)), 6)
    53.130102
    """
    return lib.atan(w * tz) - lib.atan(w * t1) - lib.atan(w * t3)


def total_capacitance(
    icp: Any, kvco: Any, n: Any, w: Any, tz: Any, t1: Any, t3: Any = 0, *, lib: ModuleType = math
) -> Any:
    """Return ``A0`` (farads) that makes ``|G(j*w)| = 1``; ``kvco`` in Hz/V, ``w`` in rad/s.

    ``A0 = Icp*Kvco/(N*w**2) * sqrt((1 + (w*Tz)**2) / ((1 + (w*T1)**2) * (1 + (w*T3)**2)))``;
    leave ``t3`` at 0 for order 2.

    Examples
    --------
    >>> total_capacitance(1.0, 1.0, 1.0, 1.0, 0.0, 0.0)
    1.0
    """
    ratio = (1 + (w * tz) ** 2) / ((1 + (w * t1) ** 2) * (1 + (w * t3) ** 2))
    return icp * kvco / (n * w**2) * lib.sqrt(ratio)


def peak_zero_time_constant(w: Any, t1: Any) -> Any:
    """Return the ``Tz`` that puts the phase peak of the second-order loop at ``w``: ``1/(w**2*T1)``.

    Examples
    --------
    >>> peak_zero_time_constant(2.0, 0.125)
    2.0
    """
    return 1 / (w**2 * t1)


def component_values(order: int, a0: Any, a1: Any, a2: Any, tz: Any, *, lib: ModuleType = math) -> dict[str, Any]:
    """Return the parts ``{name: value}`` from ``A0, A1, A2, Tz`` (the inverse coefficient map).

    Order 2 (``a2`` is ignored): ``C2 = A1/Tz``, ``C1 = A0 - C2``, ``R1 = Tz/C1``.

    Order 3: with ``D = A0*Tz**2 - A1*Tz + A2`` (which is ``A0*(Tz-T1)*(Tz-T3)``)
    and ``q = sqrt(A2*D)``, the choice of ``C2`` that makes ``C3`` largest is
    ``C2 = (A2 + q)/Tz**2``; then ``C1 = (D + q)/Tz**2``, ``R1 = Tz/C1``,
    ``C3 = (A1**2 - 4*A0*A2) / (A1*Tz - 2*A2 + 2*q)`` (the same as
    ``A1/Tz - 2*C2``, rationalised so that nothing cancels when ``C3`` is small)
    and ``R3 = A2/(Tz*C2*C3)``.

    Examples
    --------
    >>> parts = component_values(2, 1.1e-9, 1e-16, 0.0, 1e-6)
    >>> round(parts["r1"], 9), parts["c2"]
    (1000.0, 1e-10)
    """
    _check_order(order)
    if order == 2:
        c2 = a1 / tz
        c1 = a0 - c2
        return {"r1": tz / c1, "c1": c1, "c2": c2}
    d = a0 * tz**2 - a1 * tz + a2
    q = lib.sqrt(a2 * d)
    c2 = (a2 + q) / tz**2
    c1 = (d + q) / tz**2
    c3 = (a1**2 - 4 * a0 * a2) / (a1 * tz - 2 * a2 + 2 * q)
    return {"r1": tz / c1, "c1": c1, "c2": c2, "r3": a2 / (tz * c2 * c3), "c3": c3}


def resistor_noise_transfer(order: int, resistor: str, s: Any, *components: Any) -> Any:
    """Return ``Vtune/Vn`` for a noise voltage ``Vn`` in series with ``resistor``, charge pump open.

    With ``P(s) = A2*s**2 + A1*s + A0`` (the denominator of ``Z(s)*s``):
    ``T_R1 = C1/P(s)``, and for order 3 ``T_R3 = (R1*C1*C2*s + C1 + C2)/P(s)``.
    ``s`` (rad/s) may be a complex number or a numpy array.

    Examples
    --------
    >>> resistor_noise_transfer(2, "r1", 0.0, 1e3, 1e-9, 1e-9)
    0.5
    """
    _check_order(order)
    if resistor not in ("r1", "r3") or (resistor == "r3" and order == 2):
        raise ClockplanError(
            f"no resistor {resistor!r} in an order-{order} filter",
            key=resistor,
            hint="the resistors are r1" + (" and r3" if order == 3 else ""),
        )
    a0, a1, a2, _ = impedance_coefficients(order, *components)
    denominator = (a2 * s + a1) * s + a0
    r1, c1, c2 = components[:3]
    if resistor == "r1":
        return c1 / denominator
    return (r1 * c1 * c2 * s + c1 + c2) / denominator
