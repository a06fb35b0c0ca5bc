"""Reading and writing quantities: the one place where units and prefixes live.

Inside clockplan everything is SI (Hz, seconds, farads, degrees Celsius) and
frequency errors are plain fractions (1 ppm is ``Fraction(1, 10**6)``).
Text with units exists only at the edges: board files and reports.

Decimal text becomes an exact :class:`~fractions.Fraction`: ``"156.25 MHz"``
is exactly 156250000 Hz, and ``"148.5/1.001 MHz"`` is exactly
148500000000/1001 Hz.  Formatting never hides an inexact value: a frequency
that is not the round number it resembles is printed with ``≈`` and enough
digits to show the difference.
"""

from __future__ import annotations

import math
import re
from fractions import Fraction

from clockplan.errors import UnitError

__all__ = [
    "PPM",
    "PPB",
    "MIN_FREQUENCY",
    "MAX_FREQUENCY",
    "MAX_FREQUENCY_ERROR",
    "MAX_NUMBER_TEXT",
    "MAX_EXPRESSION_DEPTH",
    "parse_number",
    "parse_ratio",
    "parse_frequency",
    "parse_ppm",
    "parse_time",
    "parse_dbc",
    "parse_temperature",
    "parse_duration",
    "parse_quantity",
    "format_frequency",
    "format_exact",
    "format_ppm",
    "format_time",
    "format_quantity",
]

PPM = Fraction(1, 10**6)
PPB = Fraction(1, 10**9)
#: The frequencies a board file may state: 1 mHz to 1 THz (a prefix mix-up lands outside).
MIN_FREQUENCY = Fraction(1, 1000)
MAX_FREQUENCY = Fraction(10**12)
#: The largest frequency error read: ±100 % (an error of -100 % is 0 Hz).
MAX_FREQUENCY_ERROR = Fraction(1)

#: Numerators and denominators stay below 2^8192 (about 2466 digits): "(2^4096)^4096"
#: would otherwise eat the memory, and Python refuses to print integers past 4300 digits.
_MAX_BITS = 8192

_PREFIXES: dict[str, Fraction] = {
    "a": Fraction(1, 10**18),
    "f": Fraction(1, 10**15),
    "p": Fraction(1, 10**12),
    "n": Fraction(1, 10**9),
    "u": Fraction(1, 10**6),
    "µ": Fraction(1, 10**6),
    "μ": Fraction(1, 10**6),
    "m": Fraction(1, 10**3),
    "": Fraction(1),
    "k": Fraction(10**3),
    "K": Fraction(10**3),
    "M": Fraction(10**6),
    "G": Fraction(10**9),
    "T": Fraction(10**12),
}
# Prefixes used when writing, largest first.
_OUTPUT_PREFIXES = ["T", "G", "M", "k", "", "m", "µ", "n", "p", "f", "a"]

_SECONDS_PER_DAY = 86400
_DURATION_UNITS: dict[str, Fraction] = {
    "s": Fraction(1),
    "second": Fraction(1),
    "min": Fraction(60),
    "minute": Fraction(60),
    "h": Fraction(3600),
    "hour": Fraction(3600),
    "d": Fraction(_SECONDS_PER_DAY),
    "day": Fraction(_SECONDS_PER_DAY),
    "week": Fraction(7 * _SECONDS_PER_DAY),
    # A year is the Julian year of 365.25 days (IAU convention).
    "y": Fraction(36525 * _SECONDS_PER_DAY, 100),
    "year": Fraction(36525 * _SECONDS_PER_DAY, 100),
    "month": Fraction(36525 * _SECONDS_PER_DAY, 1200),
}

# ASCII digits only: Python's \d also matches full-width and Arabic-Indic digits, which a
# board file must not read as numbers in silence (they are refused with a located error).
_NUMBER_RE = re.compile(r"[0-9]+(?:\.[0-9]*)?(?:[eE][+-]?[0-9]+)?|\.[0-9]+(?:[eE][+-]?[0-9]+)?")
_TOKEN_RE = re.compile(r"\s*(?:(?P<num>[0-9]+(?:\.[0-9]*)?(?:[eE][+-]?[0-9]+)?|\.[0-9]+(?:[eE][+-]?[0-9]+)?)|(?P<op>\*\*|[-+*/^()]))")
#: How deeply parentheses, signs and powers may nest in one value; real values need two or three.
MAX_EXPRESSION_DEPTH = 32
_UNIT_TAIL_RE = re.compile(r"^(?P<value>.*?)\s*(?P<unit>[A-Za-zµμ°%Ω][A-Za-zµμ°%Ω/^0-9²]*)?\s*$")


# --------------------------------------------------------------------------- numbers


class _ExpressionParser:
    """Recursive-descent parser for exact rational arithmetic (no ``eval``).

    Grammar: ``expr := term (('+'|'-') term)*``, ``term := unary (('*'|'/') unary)*``,
    ``unary := ('+'|'-') unary | power``, ``power := atom (('^'|'**') unary)?``,
    ``atom := number | '(' expr ')'``.
    """

    _MAX_EXPONENT = 4096  # keeps "2^99999999" from hanging the tool

    def __init__(self, text: str) -> None:
        self.text = text
        self.tokens = self._tokenize(text)
        self.pos = 0
        self.depth = 0

    def _tokenize(self, text: str) -> list[str]:
        tokens: list[str] = []
        pos = 0
        stripped = text.rstrip()
        while pos < len(stripped):
            match = _TOKEN_RE.match(stripped, pos)
            if not match or match.end() == pos:
                digit = next((c for c in stripped[pos:] if c.isdigit() and not c.isascii()), None)
                if digit is not None:
                    raise UnitError(
                        f"{_shorten(text)} has a digit that is not an ASCII digit ({_codepoint(digit)})",
                        hint="write numbers with the digits 0-9 (full-width or other scripts' digits are not read)",
                    )
                raise UnitError(
                    f"cannot read {text!r} as a number (unexpected {stripped[pos:].strip()[:10]!r})",
                    hint="write a decimal number or a ratio such as '100.5', '201/2' or '2^24'",
                )
            tokens.append(match.group("num") or match.group("op"))
            pos = match.end()
        return tokens

    def parse(self) -> Fraction:
        if not self.tokens:
            raise UnitError("a number is missing", hint="write a number such as '25' or '156.25'")
        value = self._expr()
        if self.pos != len(self.tokens):
            raise UnitError(
                f"cannot read {self.text!r} as a number (unexpected {self.tokens[self.pos]!r})",
                hint="write a decimal number or a ratio such as '100.5', '201/2' or '2^24'",
            )
        return value

    def _peek(self) -> str | None:
        return self.tokens[self.pos] if self.pos < len(self.tokens) else None

    def _take(self) -> str:
        token = self._peek()
        if token is None:
            raise UnitError(f"{self.text!r} ends too early", hint="complete the expression")
        self.pos += 1
        return token

    def _expr(self) -> Fraction:
        value = self._term()
        while self._peek() in ("+", "-"):
            op = self._take()
            rhs = self._term()
            value = self._bounded(value + rhs if op == "+" else value - rhs)
        return value

    def _term(self) -> Fraction:
        value = self._unary()
        while self._peek() in ("*", "/"):
            op = self._take()
            rhs = self._unary()
            if op == "/":
                if rhs == 0:
                    raise UnitError(f"division by zero in {self.text!r}", hint="check the denominator")
                value = self._bounded(value / rhs)
            else:
                value = self._bounded(value * rhs)
        return value

    def _unary(self) -> Fraction:
        # Every recursion passes here (signs, exponents, parentheses): bound it so a value of
        # 200 nested parentheses or 1000 signs is a located error, not a stack overflow.
        self.depth += 1
        if self.depth > MAX_EXPRESSION_DEPTH:
            raise UnitError(
                f"{_shorten(self.text)} nests parentheses, signs or powers more than {MAX_EXPRESSION_DEPTH} deep",
                hint="write the value as a plain number or a short ratio such as '148.5/1.001'",
            )
        try:
            if self._peek() in ("+", "-"):
                sign = self._take()
                value = self._unary()
                return -value if sign == "-" else value
            return self._power()
        finally:
            self.depth -= 1

    def _power(self) -> Fraction:
        base = self._atom()
        if self._peek() in ("^", "**"):
            self._take()
            exponent = self._unary()
            if exponent.denominator != 1 or abs(exponent) > self._MAX_EXPONENT:
                raise UnitError(
                    f"exponent {exponent} in {self.text!r} is not a small whole number",
                    hint=f"use a whole exponent between -{self._MAX_EXPONENT} and {self._MAX_EXPONENT}",
                )
            if base == 0 and exponent < 0:
                raise UnitError(f"zero to a negative power in {self.text!r}", hint="check the expression")
            bits = max(base.numerator.bit_length(), base.denominator.bit_length()) * abs(int(exponent))
            if bits > _MAX_BITS:
                raise self._too_large()
            return base ** int(exponent)
        return base

    def _bounded(self, value: Fraction) -> Fraction:
        if max(value.numerator.bit_length(), value.denominator.bit_length()) > _MAX_BITS:
            raise self._too_large()
        return value

    def _too_large(self) -> UnitError:
        return UnitError(
            f"{_shorten(self.text)} is too large a number to work with",
            hint="numbers in a board file stay within about 2400 digits; check the exponent",
        )

    def _atom(self) -> Fraction:
        token = self._take()
        if token == "(":
            value = self._expr()
            if self._take() != ")":
                raise UnitError(f"unbalanced parentheses in {self.text!r}", hint="close every '('")
            return value
        if _NUMBER_RE.fullmatch(token):
            return _decimal_to_fraction(token)
        raise UnitError(
            f"cannot read {self.text!r} as a number (unexpected {token!r})",
            hint="write a decimal number or a ratio such as '100.5', '201/2' or '2^24'",
        )


def _codepoint(char: str) -> str:
    """``U+FF11 '１'``: a character named by its code point, for messages."""
    return f"U+{ord(char):04X} {char!r}"


def _shorten(text: str, limit: int = 40) -> str:
    """``repr(text)``, cut to ``limit`` characters with its length said, for messages."""
    return repr(text) if len(text) <= limit else f"{text[:limit]!r}... ({len(text)} characters)"


#: The longest text read as a number; real values are a few dozen characters.
MAX_NUMBER_TEXT = 1000


def _decimal_to_fraction(token: str) -> Fraction:
    mantissa, _, exponent = token.lower().partition("e")
    if exponent and abs(int(exponent)) > 400:
        raise UnitError(f"exponent of {token!r} is out of range", hint="use an exponent within ±400")
    return Fraction(mantissa) * (Fraction(10) ** int(exponent or 0))


def parse_number(value: object) -> Fraction:
    """Read an exact number from text or a TOML number.

    Parameters
    ----------
    value
        ``int``, ``float`` (taken by its shortest decimal form, so ``0.1`` is 1/10),
        or text with ``+ - * / ^`` and parentheses.

    Examples
    --------
    >>> parse_number("148.5/1.001")
    Fraction(13500, 91)
    >>> parse_number(0.1)
    Fraction(1, 10)
    """
    if isinstance(value, bool):
        raise UnitError(f"expected a number, got {value!r}", hint="write a number, not true/false")
    if isinstance(value, int):
        if value.bit_length() > _MAX_BITS:
            raise UnitError(f"a number of {value.bit_length()} bits is too large to work with", hint="check the value")
        return Fraction(value)
    if isinstance(value, float):
        if not math.isfinite(value):
            raise UnitError(f"{value!r} is not a finite number", hint="write a finite number")
        return Fraction(repr(value))
    if isinstance(value, Fraction):
        return value
    if isinstance(value, str):
        if len(value) > MAX_NUMBER_TEXT:
            raise UnitError(
                f"{_shorten(value)} is too long to be a number",
                hint=f"write the number in at most {MAX_NUMBER_TEXT} characters",
            )
        return _ExpressionParser(value.replace("_", "").replace("×", "*")).parse()
    raise UnitError(
        f"expected a number, got {type(value).__name__} {value!r}",
        hint="write a number such as 25 or a string such as '25 MHz'",
    )


def parse_ratio(value: object) -> Fraction:
    """Read a divider or multiplier ratio: ``100``, ``"100.5"``, ``"201/2"``, ``"2^24"``.

    Examples
    --------
    >>> parse_ratio("100 + 1/3")
    Fraction(301, 3)
    """
    return parse_number(value)


# --------------------------------------------------------------------------- units


def _split_unit(text: str) -> tuple[str, str]:
    match = _UNIT_TAIL_RE.match(text.strip())
    assert match is not None  # the pattern accepts any text
    return match.group("value"), match.group("unit") or ""


def _prefix_scale(unit: str, base: str, what: str, text: str) -> Fraction:
    """Return the SI scale of ``unit`` = prefix + ``base``; raise for anything else."""
    if unit == "":
        return Fraction(1)
    if unit.endswith(base):
        prefix = unit[: -len(base)]
        if prefix in _PREFIXES:
            return _PREFIXES[prefix]
    raise UnitError(
        f"unknown unit {unit!r} in {what} {text!r}",
        hint=f"use {base} with an SI prefix, e.g. 'p{base}', 'n{base}', 'k{base}', 'M{base}'",
    )


def parse_quantity(value: object, unit: str) -> Fraction:
    """Read a quantity in ``unit`` with an optional SI prefix, exactly.

    Parameters
    ----------
    value
        Text such as ``"8 pF"`` or ``"30 MHz/V"``, or a plain number taken in ``unit``.
    unit
        The SI unit expected, e.g. ``"F"``, ``"V"``, ``"A"``, ``"W"``, ``"Hz/V"``.

    Examples
    --------
    >>> parse_quantity("8 pF", "F")
    Fraction(1, 125000000000)
    """
    if not isinstance(value, str):
        return parse_number(value)
    number, found = _split_unit(value)
    scale = _prefix_scale(found, unit, "quantity", value)
    return parse_number(number) * scale


def parse_frequency(value: object) -> Fraction:
    """Read a frequency in Hz, exactly.

    Accepts ``"25 MHz"``, ``"156.25MHz"``, ``"32.768 kHz"``, ``"2.5 GHz"``,
    ``"148.5/1.001 MHz"``, or a plain number in Hz. The prefix is case-sensitive
    (``mHz`` is millihertz); all-lowercase ``mhz`` is refused as ambiguous.

    Examples
    --------
    >>> parse_frequency("156.25 MHz")
    Fraction(156250000, 1)
    >>> parse_frequency("148.5/1.001 MHz")
    Fraction(13500000000, 91)
    """
    if not isinstance(value, str):
        hz = parse_number(value)
    else:
        number, unit = _split_unit(value)
        if unit == "mhz":
            raise UnitError(
                f"{value!r}: 'mhz' is ambiguous",
                hint="write 'MHz' for megahertz or 'mHz' for millihertz",
            )
        if unit and unit.lower().endswith("hz"):
            unit = unit[:-2] + "Hz"
        scale = _prefix_scale(unit, "Hz", "frequency", value)
        hz = parse_number(number) * scale
    if hz <= 0:
        raise UnitError(f"frequency {_shorten(str(value))} is not positive", hint="a frequency must be above 0 Hz")
    if not MIN_FREQUENCY <= hz <= MAX_FREQUENCY:
        raise UnitError(
            f"frequency {_shorten(str(value))} is outside {format_frequency(MIN_FREQUENCY)} .. {format_frequency(MAX_FREQUENCY)}",
            hint="check the unit prefix: clock frequencies lie between 1 mHz and 1 THz",
        )
    return hz


_PPM_UNITS = {"ppm": PPM, "ppb": PPB, "%": Fraction(1, 100), "ppt": Fraction(1, 10**12)}
_RANGE_SPLIT_RE = re.compile(r"\.\.|…")
_PLUS_MINUS_RE = re.compile(r"^\s*(?:±|\+/-|\+-|-/\+)\s*")


def parse_ppm(value: object) -> tuple[Fraction, Fraction]:
    """Read a frequency-error range as fractional (min, max), exactly.

    ``"±20 ppm"`` (also ``"+-20 ppm"``, ``"+/-20 ppm"`` or a bare ``"20 ppm"``) is
    symmetric; ``"-50..+30 ppm"`` and ``"0..-5000 ppm"`` are ranges (sorted);
    ``"1 %"``, ``"500 ppb"`` use other scales. A plain number is refused: the
    unit must be written, because a ppm/percent mix-up is a silent 10000x error.

    Examples
    --------
    >>> parse_ppm("±20 ppm")
    (Fraction(-1, 50000), Fraction(1, 50000))
    >>> parse_ppm("-50..+30 ppm")[0]
    Fraction(-1, 20000)
    """
    if not isinstance(value, str):
        raise UnitError(
            f"frequency error {value!r} has no unit",
            hint="write the unit, e.g. '±20 ppm', '-50..+30 ppm', '0.5 %', '500 ppb'",
        )
    number, unit = _split_unit(value)
    scale = _PPM_UNITS.get(unit.lower())
    if scale is None:
        raise UnitError(
            f"frequency error {value!r} needs a unit of ppm, ppb or %",
            hint="write e.g. '±20 ppm', '-50..+30 ppm', '0.5 %' or '500 ppb'",
        )
    parts = _RANGE_SPLIT_RE.split(number)
    if len(parts) == 2:
        lo, hi = sorted(parse_number(p.strip().rstrip(unit).strip()) * scale for p in parts)
        return _bounded_error(value, lo, hi)
    if len(parts) > 2:
        raise UnitError(f"{value!r} has more than one '..'", hint="write a range as 'min..max ppm'")
    symmetric, count = _PLUS_MINUS_RE.subn("", number)
    magnitude = parse_number(symmetric) * scale
    if count and magnitude < 0:
        raise UnitError(f"{value!r}: ± needs a positive magnitude", hint="write e.g. '±20 ppm'")
    return _bounded_error(value, -abs(magnitude), abs(magnitude))


def _bounded_error(value: str, lo: Fraction, hi: Fraction) -> tuple[Fraction, Fraction]:
    """``(lo, hi)`` if both lie within ±100 %, else a :class:`UnitError`."""
    if max(-lo, hi) > MAX_FREQUENCY_ERROR:
        raise UnitError(
            f"frequency error {_shorten(value)} is beyond ±100 %",
            hint="a frequency error is a small share of the frequency: check the unit (ppm, ppb or %)",
        )
    return lo, hi


def parse_time(value: object) -> float:
    """Read a time interval (jitter) in seconds: ``"0.3 ps"``, ``"150 fs"``, ``"1 ns"``.

    Examples
    --------
    >>> parse_time("150 fs")
    1.5e-13
    """
    if not isinstance(value, str):
        raise UnitError(f"time {value!r} has no unit", hint="write e.g. '0.3 ps' or '150 fs'")
    number, unit = _split_unit(value)
    if unit == "":
        raise UnitError(f"time {value!r} has no unit", hint="write e.g. '0.3 ps' or '150 fs'")
    scale = _prefix_scale(unit, "s", "time", value)
    seconds = parse_number(number) * scale
    if seconds < 0:
        raise UnitError(f"time {value!r} is negative", hint="a time interval is zero or positive")
    return float(seconds)


def parse_dbc(value: object) -> float:
    """Read a level relative to the carrier: ``"-150 dBc/Hz"``, ``"-70 dBc"``, ``-150``.

    Examples
    --------
    >>> parse_dbc("-150 dBc/Hz")
    -150.0
    """
    if isinstance(value, str):
        number, unit = _split_unit(value)
        if unit.lower() not in ("", "dbc/hz", "dbc", "db"):
            raise UnitError(f"unknown unit {unit!r} in level {value!r}", hint="write e.g. '-150 dBc/Hz'")
        return float(parse_number(number))
    return float(parse_number(value))


def parse_temperature(value: object) -> float:
    """Read a temperature in °C: ``"-40 C"``, ``"85 °C"``, ``25``.

    Examples
    --------
    >>> parse_temperature("-40 C")
    -40.0
    """
    if isinstance(value, str):
        number, unit = _split_unit(value)
        if unit not in ("", "C", "°C", "degC"):
            raise UnitError(
                f"temperature {value!r} must be in degrees Celsius",
                hint="write e.g. '-40 C' or '85 °C'",
            )
        celsius = float(parse_number(number))
    else:
        celsius = float(parse_number(value))
    if celsius < -273.15:
        raise UnitError(f"temperature {value!r} is below absolute zero", hint="check the sign and unit")
    return celsius


def parse_duration(value: object) -> float:
    """Read a duration in seconds: ``"10 years"``, ``"6 months"``, ``"30 days"``, ``"1000 h"``.

    A year is 365.25 days.

    Examples
    --------
    >>> parse_duration("1 day")
    86400.0
    """
    if not isinstance(value, str):
        raise UnitError(f"duration {value!r} has no unit", hint="write e.g. '10 years' or '1000 h'")
    number, unit = _split_unit(value)
    key = unit.lower()
    if key.endswith("s") and key[:-1] in _DURATION_UNITS:
        key = key[:-1]
    if key in ("hr", "hrs"):
        key = "h"
    if key in ("yr", "yrs"):
        key = "y"
    if key not in _DURATION_UNITS:
        raise UnitError(
            f"unknown unit {unit!r} in duration {value!r}",
            hint="use s, min, h, days, weeks, months or years",
        )
    seconds = parse_number(number) * _DURATION_UNITS[key]
    if seconds < 0:
        raise UnitError(f"duration {value!r} is negative", hint="a duration is zero or positive")
    return float(seconds)


# --------------------------------------------------------------------------- formatting


def _decimal_text(value: Fraction, max_digits: int) -> str | None:
    """Exact decimal text of ``value`` if it terminates within ``max_digits`` decimals."""
    for digits in range(max_digits + 1):
        scaled = value * 10**digits
        if scaled.denominator == 1:
            sign = "-" if scaled < 0 else ""
            text = str(abs(scaled.numerator)).rjust(digits + 1, "0")
            return sign + (text[:-digits] + "." + text[-digits:] if digits else text)
    return None


def _pick_prefix(magnitude: Fraction) -> str:
    for prefix in _OUTPUT_PREFIXES:
        if magnitude >= _PREFIXES[prefix]:
            return prefix
    return _OUTPUT_PREFIXES[-1]


def format_quantity(value: Fraction | int | float, unit: str, significant: int = 12) -> str:
    """Format a quantity with an engineering prefix, exact when it is a short decimal.

    An exact value is written with all its digits if its decimal expansion
    terminates within ``significant`` digits; otherwise it is rounded to
    10 significant digits (fewer than any exact value may show) and marked
    ``≈``, so an inexact value never looks exact.

    Examples
    --------
    >>> format_quantity(Fraction(156250000), "Hz")
    '156.25 MHz'
    >>> format_quantity(Fraction(148500000000, 1001), "Hz")
    '≈148.3516484 MHz'
    """
    if isinstance(value, float):
        if not math.isfinite(value):
            return f"{value} {unit}"
        value = Fraction(value)
    value = Fraction(value)
    if value == 0:
        return f"0 {unit}"
    prefix = _pick_prefix(abs(value))
    scaled = value / _PREFIXES[prefix]
    integer_digits = len(str(abs(int(scaled)))) if abs(scaled) >= 1 else 1
    exact = _decimal_text(scaled, max(significant - integer_digits, 0))
    if exact is not None:
        return f"{exact} {prefix}{unit}"
    decimals = max(min(significant, 10) - integer_digits, 0)
    rounded = f"{float(scaled):.{decimals}f}".rstrip("0").rstrip(".")
    return f"≈{rounded} {prefix}{unit}"


def format_frequency(hz: Fraction | int | float) -> str:
    """Format a frequency, e.g. ``'156.25 MHz'``; inexact values carry ``≈``.

    Examples
    --------
    >>> format_frequency(Fraction(32768))
    '32.768 kHz'
    """
    return format_quantity(hz, "Hz")


def format_exact(value: Fraction) -> str:
    """Exact machine-readable text: ``'156250000'`` or ``'148500000000/1001'``.

    Examples
    --------
    >>> format_exact(Fraction(1, 3))
    '1/3'
    """
    value = Fraction(value)
    return str(value.numerator) if value.denominator == 1 else f"{value.numerator}/{value.denominator}"


def format_ppm(fractional: Fraction | float, digits: int = 4) -> str:
    """Format a fractional frequency error in ppm with its sign; exact zero is ``'0 ppm'``.

    Examples
    --------
    >>> format_ppm(Fraction(-1, 50000))
    '-20 ppm'
    >>> format_ppm(Fraction(0))
    '0 ppm'
    """
    if fractional == 0:
        return "0 ppm"
    ppm = float(fractional) * 1e6
    if ppm == 0 and isinstance(fractional, Fraction):
        # Below the smallest float (an error of 1e-400): still not zero, so never printed as one.
        from decimal import Decimal, localcontext

        with localcontext() as context:
            context.prec = digits
            scaled = Decimal(fractional.numerator) * 10**6 / Decimal(fractional.denominator)
        mantissa, exponent = f"{scaled:+.{digits - 1}e}".split("e")
        return f"{mantissa.rstrip('0').rstrip('.')}e{int(exponent)} ppm"
    if not math.isfinite(ppm):
        return f"{ppm} ppm"
    magnitude = abs(ppm)
    if magnitude < 1e-3:
        mantissa, exponent = f"{ppm:+.{digits - 1}e}".split("e")
        return f"{mantissa.rstrip('0').rstrip('.')}e{int(exponent)} ppm"
    decimals = max(digits - 1 - math.floor(math.log10(magnitude)), 0)
    text = f"{ppm:+,.{decimals}f}"
    if "." in text:
        text = text.rstrip("0").rstrip(".")
    return f"{text} ppm"


def format_time(seconds: float, digits: int = 3) -> str:
    """Format a time interval with an engineering prefix, e.g. ``'312 fs'``.

    Examples
    --------
    >>> format_time(3.12e-13)
    '312 fs'
    """
    if seconds == 0:
        return "0 s"
    if not math.isfinite(seconds):
        return f"{seconds} s"
    magnitude = abs(seconds)
    for prefix in _OUTPUT_PREFIXES:
        scale = float(_PREFIXES[prefix])
        if magnitude >= scale * 0.9995:
            return f"{seconds / scale:.{digits}g} {prefix}s"
    return f"{seconds / 1e-18:.{digits}g} as"
