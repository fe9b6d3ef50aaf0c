"""Short texts shared by the diagrams and the reports: labels, numbers with units.

Plain strings only; escaping for HTML or Markdown happens in the renderers,
and the drawing code never lets matplotlib parse these texts as math.
"""

from __future__ import annotations

import math
import re
from pathlib import PurePath

from fescan.core.numbers import format_quantity
from fescan.core.records import Cofactor
from fescan.transfer.graph import Hop
from fescan.transfer.potentials import Potential

__all__ = ["MINUS", "DIGITS", "number", "signed", "volts", "quantity", "duration", "short_time", "plural",
           "plain_words", "tidy_numbers", "structure_name", "cofactor_label", "hop_label", "is_user_value"]

#: The typographic minus sign used in figures and reports.
MINUS = "\u2212"
#: Significant digits of every model estimate (time, flux, ratio) in the HTML and Markdown reports,
#: as in the terminal output.
DIGITS = 3


def number(value: float | None, digits: int = 2) -> str:
    """A fixed-point number with a true minus sign; ``'–'`` when undefined.

    A value that rounds to zero prints without a sign (no ``−0.00``).

    Examples
    --------
    >>> number(-0.191)
    '−0.19'
    >>> number(-0.001)
    '0.00'
    >>> number(None)
    '–'
    """
    if value is None or not math.isfinite(value):
        return "\u2013"
    text = f"{value:.{digits}f}"
    if float(text) == 0.0:
        text = f"{0.0:.{digits}f}"
    return text.replace("-", MINUS)


def signed(value: float, digits: int = 2) -> str:
    """A number with an explicit sign and a true minus sign.

    Examples
    --------
    >>> signed(-0.4)
    '−0.40'
    >>> signed(0.045, 3)
    '+0.045'
    >>> signed(-0.001)
    '0.00'
    """
    text = f"{value:+.{digits}f}"
    if float(text) == 0.0:
        return text[1:]
    return text.replace("-", MINUS)


def volts(value: float, digits: int = 2) -> str:
    """A potential in V: ``'−0.40 V'``."""
    return f"{signed(value, digits)} V"


def quantity(value: float | None, unit: str = "", digits: int = DIGITS) -> str:
    """A model estimate with ``digits`` significant digits (:func:`fescan.core.numbers.format_quantity`).

    Very large or small values get a power of ten (``1.43×10^5``), times in s an SI
    prefix; a true minus sign; ``'–'`` when undefined (None, NaN, infinite).

    Parameters
    ----------
    value : float or None
    unit : str, optional
        Unit appended after a space (``"s"`` gets an SI prefix).
    digits : int, optional
        Significant digits (default :data:`DIGITS`).

    Returns
    -------
    str

    Examples
    --------
    >>> quantity(142778.563, "electrons s⁻¹")
    '1.43×10^5 electrons s⁻¹'
    >>> quantity(35530.2)
    '3.55×10^4'
    >>> quantity(-12.345)
    '−12.3'
    >>> quantity(None)
    '–'
    """
    if value is None or not math.isfinite(value):
        return "\u2013"
    if value == 0:
        return f"0 {unit}".rstrip()
    return format_quantity(float(value), unit, digits).replace("-", MINUS)


def duration(seconds: float | None, digits: int = DIGITS) -> str:
    """A time with ``digits`` significant digits and an SI prefix, for HTML and Markdown documents.

    ``'–'`` when undefined (None, NaN, infinite). The same style as the terminal output
    (:func:`fescan.core.numbers.format_quantity`); figures use :func:`short_time` (two digits).

    Examples
    --------
    >>> duration(3.214e-6)
    '3.21 µs'
    >>> duration(0.41)
    '410 ms'
    >>> duration(None)
    '–'
    """
    return quantity(seconds, "s", digits)


def short_time(seconds: float | None) -> str:
    """A time with two significant digits and a unit (``'3.2 µs'``), ``'–'`` when undefined.

    Examples
    --------
    >>> short_time(3.21e-6)
    '3.2 µs'
    >>> short_time(0.41)
    '410 ms'
    >>> short_time(float("inf"))
    '–'
    """
    if seconds is None or not math.isfinite(seconds):
        return "\u2013"
    for unit, f in (("s", 1.0), ("ms", 1e-3), ("µs", 1e-6), ("ns", 1e-9), ("ps", 1e-12)):
        if seconds >= f:
            v = float(f"{seconds / f:.2g}")
            return f"{v:g} {unit}"
    return f"{float(f'{seconds / 1e-15:.2g}'):g} fs"


def plural(n: int, word: str, many: str | None = None) -> str:
    """A count with its noun in the right number.

    Examples
    --------
    >>> plural(1, "gap or slow hop", "gaps or slow hops")
    '1 gap or slow hop'
    >>> plural(3, "wire")
    '3 wires'
    """
    return f"{n} {word if n == 1 else (many or word + 's')}"


def plain_words(code: str) -> str:
    """A code name in plain words (``incomplete_cluster`` → ``incomplete cluster``).

    Examples
    --------
    >>> plain_words("stretched_bond")
    'stretched bond'
    """
    return " ".join(str(code).replace("_", " ").replace("-", " ").split())


_E_NOTATION = re.compile(r"(?<![\w.])(-?\d+(?:\.\d+)?)[eE]([+-]?)0*(\d+)(?![\w.])")


def tidy_numbers(text: str) -> str:
    """Numbers in computer notation (``4.57e+03``) written as the reports write them (``4.57×10^3``).

    Used on notes that other stages compose, so a page has one number style.

    Examples
    --------
    >>> tidy_numbers("the time is 4.57e+03 times the sum; 2e-05 s")
    'the time is 4.57×10^3 times the sum; 2×10^−5 s'
    """
    def one(m: re.Match[str]) -> str:
        sign = MINUS if m.group(2) == "-" else ""
        return f"{m.group(1).replace('-', MINUS)}×10^{sign}{m.group(3)}"

    return _E_NOTATION.sub(one, str(text))


def structure_name(path: str) -> str:
    """The name a report gives a structure: its file name without folders, ``.gz`` and format suffix.

    Used in every report and diagram title, so reports of files with and without an
    entry id in their header are named alike.

    Examples
    --------
    >>> structure_name("example_structures/rb2_gap.pdb")
    'rb2_gap'
    >>> structure_name("/data/2FUG.cif.gz")
    '2FUG'
    """
    name = PurePath(str(path)).name
    if name.lower().endswith(".gz"):
        name = name[:-3]
    stem = PurePath(name).stem
    return stem or name


def is_user_value(pot: Potential) -> bool:
    """Whether a potential comes from the user's file rather than the packaged defaults."""
    return pot.origin != "default"


def cofactor_label(c: Cofactor, pot: Potential, role: str = "", isolated: bool = False) -> str:
    """Label of a cofactor in the relay diagram (class, chain/residue, potential used).

    Parameters
    ----------
    c : Cofactor
    pot : Potential
        Potential used for the cofactor.
    role : str, optional
        ``"entry"`` or ``"exit"``, written before the chain/residue.
    isolated : bool, optional
        The cofactor has no partner within the gap limit (said after the chain/residue).

    Returns
    -------
    str
        Three lines: chain/residue, class, potential (``(user)`` when from the user's file).
    """
    first = f"{role} {c.key}" if role else c.key
    if isolated:
        first += ", isolated"
    return "\n".join([first, c.cls, volts(pot.e_v) + (" (user)" if is_user_value(pot) else "")])


def hop_label(h: Hop, rate_threshold: float, bottleneck: bool = False) -> tuple[str, bool]:
    """Label of a path hop: edge-to-edge distance and hop time; ``(text, bold)``.

    Gaps read ``gap 17.8 Å``; the bottleneck and gaps are bold.
    """
    t = short_time(h.hop_time)
    tag = ", sym." if h.symmetry else ""
    if h.gap:
        return f"gap {h.edge:.1f} Å{tag}\n{t}", True
    text = f"{h.edge:.1f} Å{tag}\n{t}"
    if h.slow:
        text += " slow"
    return text, bottleneck
