"""Short texts shared by the diagrams and the reports: labels, numbers with units.

Plain strings only; escaping for HTML or Markdown happens in the renderers,
and the drawing code never lets matplotlib parse these texts as math.
"""

from __future__ import annotations

import math

from fescan.core.records import Cofactor
from fescan.transfer.graph import Hop
from fescan.transfer.potentials import Potential

__all__ = ["MINUS", "number", "signed", "volts", "duration", "short_time", "cofactor_label", "hop_label",
           "is_user_value"]

#: The typographic minus sign used in figures and reports.
MINUS = "\u2212"


def number(value: float | None, digits: int = 2) -> str:
    """A fixed-point number with a true minus sign; ``'–'`` when undefined.

    Examples
    --------
    >>> number(-0.191)
    '−0.19'
    >>> number(None)
    '–'
    """
    if value is None or not math.isfinite(value):
        return "\u2013"
    return f"{value:.{digits}f}".replace("-", MINUS)


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


def duration(seconds: float | None, digits: int = 3) -> str:
    """A time with ``digits`` significant digits and a unit, for HTML and Markdown documents.

    ``'–'`` when undefined (None, NaN, infinite). Figures use :func:`short_time`
    (two digits); the terminal uses :func:`fescan.report.text.format_time`.

    Examples
    --------
    >>> duration(3.214e-6)
    '3.21 µs'
    >>> duration(0.41)
    '410 ms'
    >>> duration(None)
    '–'
    """
    if seconds is None or not math.isfinite(seconds):
        return "\u2013"
    for unit, f in (("s", 1.0), ("ms", 1e-3), ("µs", 1e-6), ("ns", 1e-9), ("ps", 1e-12)):
        if seconds >= f:
            return f"{float(f'{seconds / f:.{digits}g}'):g} {unit}"
    return f"{float(f'{seconds / 1e-15:.{digits}g}'):g} fs"


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
