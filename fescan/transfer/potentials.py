"""One parameter record per cofactor: its couples, λ and role, each with its origin.

Defaults come from the packaged couples table (:mod:`fescan.transfer.couples`),
chosen by class and sub-class (structural, or by context:
:mod:`fescan.transfer.context`). A user overrides single cofactors with a TOML
file; a cofactor is named by its selector ``CHAIN/RESNUM[ICODE]`` or by its full
id ``MODEL:CHAIN/RESNUM[ICODE]:CODE``::

    [cofactor."A/56"]
    potential = -0.42          # V vs SHE, a one-electron centre
    reorganisation = 0.6       # eV, optional

    [cofactor."1:A/1:FMN"]
    potential_ox_sq = -0.414   # V, flavin / quinone oxidised/semiquinone couple
    potential_sq_red = -0.336  # V, semiquinone/reduced couple
    role = "catalytic"         # optional: relay, catalytic, structural, ion or additive

    [reservoirs]
    source = -0.32             # V, pool feeding the entry (here NAD+/NADH)
    sink = 0.09                # V, pool draining the exit

**The couple a hop uses** (one electron at a time along the wire): a one-electron
centre has one couple. A two-electron cofactor at the *entry* starts fully
reduced by its substrate (a flavin reduced by NADH, a quinol) and gives its first
electron at the ``sq/red`` couple; everywhere else (an interior quinone, the exit
quinone receiving its first electron) it works between oxidised and semiquinone,
at ``ox/sq``; so does a sub-class that is a one-electron carrier in its protein
(photosystem II QA, photosystem I A1), even at the entry. The steady-state model
uses both couples.
"""

from __future__ import annotations

import math
import os
import re
import sys
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from pathlib import Path

from fescan.core.errors import ConfigError
from fescan.core.records import ROLES, Cofactor, residue_key
from fescan.transfer.couples import (
    CITATION_KINDS,
    CLASS_DEFAULT,
    STEPS,
    Potential,
    couple_table,
    default_couples,
    subclass_steps,
)

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - exercised on Python 3.10 only
    import tomli as tomllib

__all__ = [
    "STEPS",
    "CITATION_KINDS",
    "CLASS_DEFAULT",
    "POTENTIAL_RANGE_V",
    "Potential",
    "UserParameters",
    "UserFile",
    "CofactorParameters",
    "couple_table",
    "default_couples",
    "default_potential",
    "load_user_file",
    "load_user_parameters",
    "assign_parameters",
    "assign_potentials",
    "reorganisation_overrides",
]

#: Accepted range (V) of a user-given midpoint potential.
POTENTIAL_RANGE_V: tuple[float, float] = (-1.5, 1.5)

_SELECTOR_RE = re.compile(r"^\s*([^/\s:]+)\s*/\s*(-?\d+)\s*([A-Za-z]?)\s*$")
_FULL_ID_RE = re.compile(r"^\s*(\d+)\s*:\s*([^:]+?)\s*:\s*(\S+)\s*$")
_REORG_KEYS = ("reorganisation", "reorganization")
_POT_KEYS = ("potential", "potential_ox_sq", "potential_sq_red")
_KNOWN_KEYS = (*_POT_KEYS, *_REORG_KEYS, "role")
_RESERVOIR_KEYS = ("source", "sink")


@dataclass(frozen=True, slots=True)
class UserParameters:
    """What a user file gives for one cofactor (``None`` = not given).

    Attributes
    ----------
    selector : str
        Normalised selector ``CHAIN/RESNUM[ICODE]`` or full id ``MODEL:CHAIN/RESNUM:CODE``.
    path : str
        File the values were read from.
    potential, potential_ox_sq, potential_sq_red : float or None
        Couples in V (one-electron centre; the two couples of a flavin or quinone).
    reorganisation : float or None
        λ in eV.
    role : str or None
        Role override, one of :data:`fescan.core.records.ROLES`.
    """

    selector: str
    path: str
    potential: float | None = None
    reorganisation: float | None = None
    potential_ox_sq: float | None = None
    potential_sq_red: float | None = None
    role: str | None = None

    def matches(self, cof: Cofactor) -> bool:
        """Whether this selector names *cof* (full id, or key in any model)."""
        return cof.uid == self.selector if ":" in self.selector else cof.key == self.selector


@dataclass(frozen=True, slots=True)
class UserFile:
    """A parsed parameter file: per-cofactor values and reservoir potentials (V)."""

    path: str
    cofactors: dict[str, UserParameters] = field(default_factory=dict)
    reservoirs: dict[str, float] = field(default_factory=dict)


@dataclass(frozen=True, slots=True)
class CofactorParameters:
    """Every parameter of one cofactor, each with where it came from.

    Attributes
    ----------
    uid, label : str
    couples : tuple of Potential
        ``(1e,)`` for a one-electron centre, ``(ox/sq, sq/red)`` for a flavin or quinone.
    subclass, subclass_reason : str
        Sub-class used to choose the couples (structural or by context) and why.
    reorg : float or None
        λ of this cofactor (eV) from the user file; ``None`` = the option's global λ.
    reorg_origin : str
    role : str or None
        Role override from the user file (``None`` = the detected role).
    role_origin : str
    one_electron_carrier : bool
        A two-electron cofactor whose sub-class works as a one-electron carrier
        (photosystem II QA, photosystem I A1): it uses ``ox/sq`` even at the entry.
    """

    uid: str
    label: str
    couples: tuple[Potential, ...]
    subclass: str = ""
    subclass_reason: str = ""
    reorg: float | None = None
    reorg_origin: str = "global λ (option)"
    role: str | None = None
    role_origin: str = ""
    one_electron_carrier: bool = False

    @property
    def two_electron(self) -> bool:
        """Whether the cofactor has two one-electron couples (flavin, quinone)."""
        return len(self.couples) == 2

    def couple(self, step: str) -> Potential:
        """The couple of this step (``1e``, ``ox/sq`` or ``sq/red``)."""
        for p in self.couples:
            if p.step == step:
                return p
        raise KeyError(f"{self.label} has no {step} couple")

    def working(self, *, entry: bool = False) -> Potential:
        """The couple a one-electron hop uses (module docstring): sq/red at the entry, else ox/sq."""
        if not self.two_electron:
            return self.couples[0]
        return self.couple("sq/red" if entry and not self.one_electron_carrier else "ox/sq")

    def to_dict(self) -> dict:
        """JSON-ready record."""
        return {"uid": self.uid, "couples": [p.to_dict() for p in self.couples], "subclass": self.subclass,
                "subclass_reason": self.subclass_reason, "reorg_ev": self.reorg, "reorg_origin": self.reorg_origin,
                "role": self.role, "role_origin": self.role_origin}


def default_potential(cls: str, category: str, subclass: str = "", step: str | None = None) -> Potential:
    """The default couple of a class: the one-electron couple, or the ``ox/sq`` (or *step*) couple.

    Examples
    --------
    >>> default_potential("[4Fe-4S]", "iron-sulfur").e_v
    -0.35
    >>> default_potential("FMN", "flavin", step="sq/red").couple
    'FMN sq/red'
    """
    couples = default_couples(cls, category, subclass)
    if step is None:
        return couples[0]
    for p in couples:
        if p.step == step:
            return p
    raise ConfigError(f"class {cls!r} has no {step} couple")


def _number(value: object, where: str, what: str) -> float:
    """Return *value* as a finite float or raise ConfigError."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise ConfigError(f"{where}: {what} must be a number; got {value!r}")
    out = float(value)
    if not math.isfinite(out):
        raise ConfigError(f"{where}: {what} must be finite; got {value!r}")
    return out


def _volts(value: object, where: str, what: str) -> float:
    v = _number(value, where, f"{what} (V)")
    lo, hi = POTENTIAL_RANGE_V
    if not lo <= v <= hi:
        raise ConfigError(f"{where}: {what} {v} V is outside {lo:+.1f}..{hi:+.1f} V")
    return v


def _normalise_selector(selector: str, path: str) -> str:
    """Return ``CHAIN/RESNUM[ICODE]`` or ``MODEL:CHAIN/RESNUM[ICODE]:CODE``."""
    full = _FULL_ID_RE.match(selector)
    if full is not None:
        return f"{int(full.group(1))}:{_normalise_selector(full.group(2), path)}:{full.group(3)}"
    base, _, part = selector.partition("#")
    m = _SELECTOR_RE.match(base)
    if m is None:
        raise ConfigError(
            f"{path}: cofactor selector {selector!r} is not of the form CHAIN/RESNUM[ICODE] "
            '(for example "A/56" or "B/245A") or a full id MODEL:CHAIN/RESNUM:CODE ("1:B/245:F3S")'
        )
    chain, num, icode = m.groups()
    key = residue_key(chain, int(num), icode)
    return f"{key}#{part.strip()}" if part.strip() else key


def _read_toml(p: str) -> dict:
    try:
        raw = Path(p).read_bytes()
    except OSError as exc:
        raise ConfigError(f"{p}: cannot read the parameter file ({exc.strerror or exc})") from None
    try:
        return tomllib.loads(raw.decode("utf-8"))
    except UnicodeDecodeError:
        raise ConfigError(f"{p}: the parameter file is not UTF-8 text") from None
    except tomllib.TOMLDecodeError as exc:
        raise ConfigError(f"{p}: not valid TOML ({exc})") from None


def _entry(selector: str, entry: object, p: str) -> UserParameters:
    key = _normalise_selector(selector, p)
    where = f'{p}: [cofactor."{selector}"]'
    if not isinstance(entry, dict):
        raise ConfigError(f"{where} must be a table of potential / reorganisation")
    unknown = sorted(set(entry) - set(_KNOWN_KEYS))
    if unknown:
        raise ConfigError(f"{where}: unknown key(s) {unknown}; allowed: {', '.join(_KNOWN_KEYS)}")
    if not entry:
        raise ConfigError(f"{where} is empty; give potential and/or reorganisation")
    reorg_keys = [k for k in _REORG_KEYS if k in entry]
    if len(reorg_keys) > 1:
        raise ConfigError(f"{where}: give either reorganisation or reorganization, not both")
    if "potential" in entry and ("potential_ox_sq" in entry or "potential_sq_red" in entry):
        raise ConfigError(f"{where}: give potential (one-electron centre) or potential_ox_sq / "
                          "potential_sq_red (two-electron cofactor), not both")
    vals = {k: _volts(entry[k], where, k.replace("_", " ")) for k in _POT_KEYS if k in entry}
    reorg = None
    if reorg_keys:
        reorg = _number(entry[reorg_keys[0]], where, "reorganisation (eV)")
        if reorg <= 0:
            raise ConfigError(f"{where}: reorganisation must be > 0 eV; got {reorg}")
    role = entry.get("role")
    if role is not None and role not in ROLES:
        raise ConfigError(f"{where}: role must be one of {', '.join(ROLES)}; got {role!r}")
    return UserParameters(selector=key, path=p, potential=vals.get("potential"), reorganisation=reorg,
                          potential_ox_sq=vals.get("potential_ox_sq"),
                          potential_sq_red=vals.get("potential_sq_red"), role=role)


def load_user_file(path: str | os.PathLike[str]) -> UserFile:
    """Read a TOML parameter file (module docstring): ``[cofactor."..."]`` tables and ``[reservoirs]``.

    Raises
    ------
    fescan.core.errors.ConfigError
        Unreadable or non-UTF-8 file, bad TOML, unknown keys, a value that is not a
        finite number, a potential outside -1.5..+1.5 V, λ ≤ 0, an unknown role, both
        ``potential`` and a two-electron couple, a malformed or repeated selector, or
        nothing to read. The message starts with the file name.
    """
    p = os.fspath(path)
    doc = _read_toml(p)
    unknown_top = sorted(set(doc) - {"cofactor", "reservoirs"})
    if unknown_top:
        raise ConfigError(f'{p}: unknown top-level key(s) {unknown_top}; only [cofactor."..."] and [reservoirs]')
    tables = doc.get("cofactor", {})
    res = doc.get("reservoirs", {})
    if not isinstance(tables, dict) or not isinstance(res, dict) or (not tables and not res):
        raise ConfigError(f'{p}: no cofactor tables; write [cofactor."CHAIN/RESNUM"] sections')
    out: dict[str, UserParameters] = {}
    for selector, entry in tables.items():
        up = _entry(selector, entry, p)
        if up.selector in out:
            raise ConfigError(f"{p}: cofactor {up.selector} is given twice (as {selector!r})")
        out[up.selector] = up
    bad = sorted(set(res) - set(_RESERVOIR_KEYS))
    if bad:
        raise ConfigError(f"{p}: [reservoirs]: unknown key(s) {bad}; allowed: source, sink")
    reservoirs = {k: _volts(v, f"{p}: [reservoirs]", k) for k, v in res.items()}
    return UserFile(p, out, reservoirs)


def load_user_parameters(path: str | os.PathLike[str]) -> dict[str, UserParameters]:
    """The per-cofactor part of a parameter file (see :func:`load_user_file`), by selector."""
    return load_user_file(path).cofactors


def _user_parameters(
    cofactors: list[Cofactor],
    user_file: str | os.PathLike[str] | UserFile | Mapping[str, UserParameters] | None,
) -> dict[str, UserParameters]:
    """Load (if a path) and check the user parameters against the cofactors; keyed by uid."""
    if user_file is None:
        return {}
    if isinstance(user_file, UserFile):
        params = dict(user_file.cofactors)
    elif isinstance(user_file, Mapping):
        params = dict(user_file)
    else:
        params = load_user_parameters(user_file)
    unknown = sorted(s for s, up in params.items() if not any(up.matches(c) for c in cofactors))
    if unknown:
        files = sorted({params[k].path for k in unknown})
        available = ", ".join(sorted({c.key for c in cofactors})) or "(none)"
        raise ConfigError(f"{', '.join(files)}: selector(s) {', '.join(unknown)} match no cofactor; "
                          f"available: {available} (or their full ids MODEL:CHAIN/RESNUM:CODE)")
    out: dict[str, UserParameters] = {}
    for c in cofactors:  # a full id wins over a CHAIN/RESNUM selector
        hits = sorted((up for up in params.values() if up.matches(c)), key=lambda up: ":" not in up.selector)
        if hits:
            out[c.uid] = hits[0]
    return out


def _user_couples(c: Cofactor, base: tuple[Potential, ...], up: UserParameters) -> tuple[Potential, ...]:
    def user(p: Potential, v: float) -> Potential:
        return Potential(v, v, v, f"user value for {c.key}", f"user file {up.path}", "user", p.couple, p.step,
                         "user value")

    if len(base) == 1:
        if up.potential_ox_sq is not None or up.potential_sq_red is not None:
            raise ConfigError(f"{up.path}: {c.label} is a one-electron centre; give potential, "
                              "not potential_ox_sq / potential_sq_red")
        return (user(base[0], up.potential),) if up.potential is not None else base
    if up.potential is not None:
        raise ConfigError(f"{up.path}: {c.label} has two one-electron couples; give potential_ox_sq and "
                          "potential_sq_red (V) instead of potential")
    ox, red = base
    return (user(ox, up.potential_ox_sq) if up.potential_ox_sq is not None else ox,
            user(red, up.potential_sq_red) if up.potential_sq_red is not None else red)


def assign_parameters(
    cofactors: Iterable[Cofactor],
    user_file: str | os.PathLike[str] | UserFile | Mapping[str, UserParameters] | None = None,
    context: Mapping[str, tuple[str, str]] | None = None,
) -> dict[str, CofactorParameters]:
    """Return the parameter record of every cofactor, by uid.

    Parameters
    ----------
    cofactors : iterable of Cofactor
    user_file : path, UserFile, mapping or None, optional
        A TOML parameter file or its loaded result.
    context : mapping of uid to (subclass, reason), optional
        Sub-classes by context (:func:`fescan.transfer.context.context_subclasses`);
        they take precedence over the structural sub-class for the couples.

    Raises
    ------
    fescan.core.errors.ConfigError
        Invalid file, a selector that names no cofactor, or a key that does not
        fit the cofactor (``potential`` for a flavin...).
    """
    cofs = list(cofactors)
    params = _user_parameters(cofs, user_file)
    context = context or {}
    out: dict[str, CofactorParameters] = {}
    for c in cofs:
        sub, why = context.get(c.uid, (c.subclass, "structural sub-class" if c.subclass else ""))
        couples = default_couples(c.cls, c.category, sub)
        up = params.get(c.uid)
        reorg, reorg_origin, role, role_origin = None, "global λ (option)", None, ""
        if up is not None:
            couples = _user_couples(c, couples, up)
            if up.reorganisation is not None:
                reorg, reorg_origin = up.reorganisation, f"user file {up.path}"
            if up.role is not None:
                role, role_origin = up.role, f"user file {up.path}"
        carrier = subclass_steps(c.cls, sub) == frozenset({"ox/sq"})
        out[c.uid] = CofactorParameters(c.uid, c.label, couples, sub, why, reorg, reorg_origin, role, role_origin,
                                        carrier)
    return out


def assign_potentials(
    cofactors: Iterable[Cofactor],
    user_file: str | os.PathLike[str] | UserFile | Mapping[str, UserParameters] | None = None,
) -> dict[str, Potential]:
    """The working couple of every cofactor (``ox/sq`` for two-electron ones), by uid.

    A convenience over :func:`assign_parameters` for callers that want one number
    per cofactor.
    """
    return {uid: p.working() for uid, p in assign_parameters(cofactors, user_file).items()}


def reorganisation_overrides(
    cofactors: Iterable[Cofactor],
    user_file: str | os.PathLike[str] | UserFile | Mapping[str, UserParameters] | None = None,
) -> dict[str, float]:
    """The user-given reorganisation energies (eV), by cofactor uid (others keep the global λ)."""
    return {uid: p.reorg for uid, p in assign_parameters(cofactors, user_file).items() if p.reorg is not None}
