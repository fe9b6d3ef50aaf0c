"""Midpoint potentials of cofactors: packaged defaults per class and user overrides.

The defaults live in the packaged table ``fescan/data/potentials.csv`` (one row per
cofactor class, plus one fallback row per category with class ``*``); every row
states its source and whether the value was read in a source (``FOUND``,
``FOUND (secondary)``) or given from memory (``MEMORY``). A user can override the
potential and the reorganisation energy of single cofactors with a TOML file::

    [cofactor."A/56"]
    potential = -0.42      # V vs SHE
    reorganisation = 0.6   # eV, optional

    [cofactor."B/245A"]
    potential = 0.06

Every :class:`Potential` says where it came from (``origin``): ``"default"`` or
``"user file <path>"``.
"""

from __future__ import annotations

import csv
import io
import math
import os
import re
import sys
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from functools import lru_cache
from importlib import resources
from pathlib import Path

from fescan.core.errors import ConfigError
from fescan.core.records import Cofactor, residue_key

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - exercised on Python 3.10 only
    import tomli as tomllib

__all__ = [
    "STATUSES",
    "POTENTIAL_RANGE_V",
    "Potential",
    "PotentialRow",
    "UserParameters",
    "potential_table",
    "default_potential",
    "load_user_parameters",
    "assign_potentials",
    "reorganisation_overrides",
]

#: Allowed values of the ``status`` column of the packaged table.
STATUSES: tuple[str, ...] = ("FOUND", "FOUND (secondary)", "MEMORY")
#: Accepted range (V) of a user-given midpoint potential.
POTENTIAL_RANGE_V: tuple[float, float] = (-1.5, 1.5)

_COLUMNS = (
    "class",
    "category",
    "e_mid_v",
    "e_low_v",
    "e_high_v",
    "n_electrons",
    "source",
    "status",
    "couple",
)
_FALLBACK_CLASS = "*"
_SELECTOR_RE = re.compile(r"^\s*([^/\s]+)\s*/\s*(-?\d+)\s*([A-Za-z]?)\s*$")
_REORG_KEYS = ("reorganisation", "reorganization")
_KNOWN_KEYS = ("potential", *_REORG_KEYS, "role")  # role: read by fescan.cofactors.roles


@dataclass(frozen=True, slots=True)
class Potential:
    """Midpoint potential assigned to one cofactor.

    Attributes
    ----------
    e_v : float
        Midpoint potential used, in V vs SHE.
    low_v, high_v : float
        Typical range of the class in V (both equal ``e_v`` for a user value).
    source : str
        Citation or explanation of the value.
    origin : str
        ``"default"`` (packaged table) or ``"user file <path>"``.
    status : str
        ``FOUND``, ``FOUND (secondary)`` or ``MEMORY`` for defaults, ``"user"`` for
        user values.
    couple : str
        Redox couple the value refers to (e.g. ``"[4Fe-4S] 2+/1+"``), when known.
    """

    e_v: float
    low_v: float
    high_v: float
    source: str
    origin: str
    status: str = ""
    couple: str = ""


@dataclass(frozen=True, slots=True)
class PotentialRow:
    """One row of the packaged default-potential table (``fescan/data/potentials.csv``).

    Attributes
    ----------
    cls : str
        Cofactor class, or ``"*"`` for the fallback row of a category.
    category : str
        Cofactor category (see :data:`fescan.model.CATEGORIES`).
    e_mid_v, e_low_v, e_high_v : float
        Default midpoint potential and typical range of the class, in V vs SHE.
    n_electrons : int
        Electrons of the couple the value refers to.
    source, status, couple : str
        Citation, evidence status (one of :data:`STATUSES`) and redox couple.
    """

    cls: str
    category: str
    e_mid_v: float
    e_low_v: float
    e_high_v: float
    n_electrons: int
    source: str
    status: str
    couple: str

    def to_potential(self) -> Potential:
        """Return this row as a default :class:`Potential`."""
        return Potential(
            e_v=self.e_mid_v,
            low_v=self.e_low_v,
            high_v=self.e_high_v,
            source=self.source,
            origin="default",
            status=self.status,
            couple=self.couple,
        )


@dataclass(frozen=True, slots=True)
class UserParameters:
    """Parameters a user file gives for one cofactor.

    Attributes
    ----------
    selector : str
        Normalised selector ``CHAIN/RESNUM[ICODE]``.
    path : str
        File the values were read from.
    potential : float or None
        Midpoint potential in V, or ``None`` when not given.
    reorganisation : float or None
        Reorganisation energy λ in eV, or ``None`` when not given.
    """

    selector: str
    path: str
    potential: float | None = None
    reorganisation: float | None = None


def _parse_row(rec: dict[str, str], line: int) -> PotentialRow:
    """Convert one CSV record of the packaged table, checking it."""
    where = f"fescan/data/potentials.csv line {line}"
    try:
        row = PotentialRow(
            cls=rec["class"].strip(),
            category=rec["category"].strip(),
            e_mid_v=float(rec["e_mid_v"]),
            e_low_v=float(rec["e_low_v"]),
            e_high_v=float(rec["e_high_v"]),
            n_electrons=int(rec["n_electrons"]),
            source=rec["source"].strip(),
            status=rec["status"].strip(),
            couple=rec["couple"].strip(),
        )
    except (KeyError, TypeError, ValueError) as exc:
        raise RuntimeError(f"{where}: malformed row ({exc})") from None
    if not row.cls or not row.category or not row.source:
        raise RuntimeError(f"{where}: empty class, category or source")
    if row.status not in STATUSES:
        raise RuntimeError(f"{where}: status {row.status!r} is not one of {STATUSES}")
    if not row.e_low_v <= row.e_mid_v <= row.e_high_v:
        raise RuntimeError(f"{where}: e_mid_v must lie within [e_low_v, e_high_v]")
    return row


@lru_cache(maxsize=1)
def potential_table() -> tuple[PotentialRow, ...]:
    """Return the packaged table of default midpoint potentials.

    Returns
    -------
    tuple of PotentialRow
        One row per class, then the category fallbacks (class ``"*"``), in file order.

    Examples
    --------
    >>> rows = potential_table()
    >>> next(r for r in rows if r.cls == "[4Fe-4S]").couple
    '[4Fe-4S] 2+/1+'
    """
    text = resources.files("fescan").joinpath("data").joinpath("potentials.csv").read_text("utf-8")
    reader = csv.DictReader(io.StringIO(text))
    if tuple(reader.fieldnames or ()) != _COLUMNS:
        raise RuntimeError(f"fescan/data/potentials.csv: columns must be {_COLUMNS}")
    rows = tuple(_parse_row(rec, i) for i, rec in enumerate(reader, start=2))
    keys = [(r.cls, r.category) if r.cls == _FALLBACK_CLASS else r.cls for r in rows]
    if len(set(keys)) != len(keys):
        raise RuntimeError("fescan/data/potentials.csv: duplicate class rows")
    return rows


def default_potential(cls: str, category: str) -> Potential:
    """Return the default midpoint potential of a cofactor class.

    Parameters
    ----------
    cls : str
        Class label as :attr:`fescan.model.Cofactor.cls` writes it (``"[4Fe-4S]"``,
        ``"FMN"``, ``"heme c"``...). Matched exactly.
    category : str
        Category of the cofactor, used when the class has no row of its own.

    Returns
    -------
    Potential
        The class row, else the fallback row of the category, with origin ``"default"``.

    Raises
    ------
    fescan.errors.ConfigError
        If neither the class nor the category has a default; give the potential of
        such a cofactor in a user file.

    Examples
    --------
    >>> default_potential("[4Fe-4S]", "iron-sulfur").e_v
    -0.4
    >>> default_potential("NiFe centre", "metal").origin
    'default'
    """
    rows = potential_table()
    for row in rows:
        if row.cls == cls and cls != _FALLBACK_CLASS:
            return row.to_potential()
    for row in rows:
        if row.cls == _FALLBACK_CLASS and row.category == category:
            return row.to_potential()
    raise ConfigError(
        f"no default midpoint potential for class {cls!r} (category {category!r}); "
        "give one in a user parameter file"
    )


def _number(value: object, where: str, what: str) -> float:
    """Return *value* as a finite float or raise ConfigError."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise ConfigError(f"{where}: {what} must be a number; got {value!r}")
    out = float(value)
    if not math.isfinite(out):
        raise ConfigError(f"{where}: {what} must be finite; got {value!r}")
    return out


def _normalise_selector(selector: str, path: str) -> str:
    """Return ``CHAIN/RESNUM[ICODE]`` for a selector of the user file."""
    m = _SELECTOR_RE.match(selector)
    if m is None:
        raise ConfigError(
            f"{path}: cofactor selector {selector!r} is not of the form CHAIN/RESNUM[ICODE] "
            '(for example "A/56" or "B/245A")'
        )
    chain, num, icode = m.groups()
    return residue_key(chain, int(num), icode)


def load_user_parameters(path: str | os.PathLike[str]) -> dict[str, UserParameters]:
    """Read a TOML file of per-cofactor potentials and reorganisation energies.

    The file holds one table per cofactor, named by its selector::

        [cofactor."A/56"]
        potential = -0.42      # midpoint potential, V vs SHE, in [-1.5, 1.5]
        reorganisation = 0.6   # eV, > 0, optional ("reorganization" also accepted)

    Parameters
    ----------
    path : str or os.PathLike
        Path of the TOML file.

    Returns
    -------
    dict of str to UserParameters
        Keyed by the normalised selector ``CHAIN/RESNUM[ICODE]`` (``"A/056"`` becomes
        ``"A/56"``).

    Raises
    ------
    fescan.errors.ConfigError
        If the file cannot be read, is not UTF-8 TOML, has keys other than the above,
        a value that is not a number, a potential outside -1.5..+1.5 V, a
        reorganisation energy ≤ 0, a malformed or repeated selector, or no cofactor
        table. The message starts with the file name.
    """
    p = os.fspath(path)
    try:
        raw = Path(p).read_bytes()
    except OSError as exc:
        raise ConfigError(f"{p}: cannot read the parameter file ({exc.strerror or exc})") from None
    try:
        doc = tomllib.loads(raw.decode("utf-8"))
    except UnicodeDecodeError:
        raise ConfigError(f"{p}: the parameter file is not UTF-8 text") from None
    except tomllib.TOMLDecodeError as exc:
        raise ConfigError(f"{p}: not valid TOML ({exc})") from None

    unknown_top = sorted(set(doc) - {"cofactor"})
    if unknown_top:
        raise ConfigError(f'{p}: unknown top-level key(s) {unknown_top}; only [cofactor."..."]')
    tables = doc.get("cofactor")
    if not isinstance(tables, dict) or not tables:
        raise ConfigError(f'{p}: no cofactor tables; write [cofactor."CHAIN/RESNUM"] sections')

    out: dict[str, UserParameters] = {}
    for selector, entry in tables.items():
        key = _normalise_selector(selector, p)
        where = f'{p}: [cofactor."{selector}"]'
        if not isinstance(entry, dict):
            raise ConfigError(f"{where} must be a table of potential / reorganisation")
        unknown = sorted(set(entry) - set(_KNOWN_KEYS))
        if unknown:
            raise ConfigError(
                f"{where}: unknown key(s) {unknown}; allowed: potential, reorganisation"
            )
        if not entry:
            raise ConfigError(f"{where} is empty; give potential and/or reorganisation")
        reorg_keys = [k for k in _REORG_KEYS if k in entry]
        if len(reorg_keys) > 1:
            raise ConfigError(f"{where}: give either reorganisation or reorganization, not both")
        potential = reorg = None
        if "potential" in entry:
            potential = _number(entry["potential"], where, "potential (V)")
            lo, hi = POTENTIAL_RANGE_V
            if not lo <= potential <= hi:
                raise ConfigError(
                    f"{where}: potential {potential} V is outside {lo:+.1f}..{hi:+.1f} V"
                )
        if reorg_keys:
            reorg = _number(entry[reorg_keys[0]], where, "reorganisation (eV)")
            if reorg <= 0:
                raise ConfigError(f"{where}: reorganisation must be > 0 eV; got {reorg}")
        if key in out:
            raise ConfigError(f"{p}: cofactor {key} is given twice (as {selector!r})")
        out[key] = UserParameters(selector=key, path=p, potential=potential, reorganisation=reorg)
    return out


def _user_parameters(
    cofactors: list[Cofactor],
    user_file: str | os.PathLike[str] | Mapping[str, UserParameters] | None,
) -> dict[str, UserParameters]:
    """Load (if a path) and check the user parameters against the cofactors."""
    if user_file is None:
        return {}
    if isinstance(user_file, Mapping):
        params = dict(user_file)
    else:
        params = load_user_parameters(user_file)
    available = sorted({c.key for c in cofactors})
    unknown = sorted(set(params) - set(available))
    if unknown:
        files = sorted({params[k].path for k in unknown})
        raise ConfigError(
            f"{', '.join(files)}: selector(s) {', '.join(unknown)} match no cofactor; "
            f"available: {', '.join(available) or '(none)'}"
        )
    return params


def assign_potentials(
    cofactors: Iterable[Cofactor],
    user_file: str | os.PathLike[str] | Mapping[str, UserParameters] | None = None,
) -> dict[str, Potential]:
    """Return the midpoint potential of every cofactor, by uid.

    Parameters
    ----------
    cofactors : iterable of Cofactor
        The cofactors of a structure.
    user_file : path, mapping or None, optional
        A TOML parameter file (see :func:`load_user_parameters`), or its already
        loaded result. A user potential replaces the default of the cofactor whose
        :attr:`~fescan.model.Cofactor.key` matches the selector (in every model).

    Returns
    -------
    dict of str to Potential
        Keyed by :attr:`fescan.model.Cofactor.uid`.

    Raises
    ------
    fescan.errors.ConfigError
        If the file is invalid, names a selector that matches no cofactor (the
        message lists the unknown and the available selectors), or a cofactor has
        neither a user value nor a default.
    """
    cofs = list(cofactors)
    params = _user_parameters(cofs, user_file)
    out: dict[str, Potential] = {}
    for cof in cofs:
        user = params.get(cof.key)
        if user is not None and user.potential is not None:
            try:
                couple = default_potential(cof.cls, cof.category).couple
            except ConfigError:
                couple = ""
            out[cof.uid] = Potential(
                e_v=user.potential,
                low_v=user.potential,
                high_v=user.potential,
                source=f"user value for {cof.key}",
                origin=f"user file {user.path}",
                status="user",
                couple=couple,
            )
        else:
            out[cof.uid] = default_potential(cof.cls, cof.category)
    return out


def reorganisation_overrides(
    cofactors: Iterable[Cofactor],
    user_file: str | os.PathLike[str] | Mapping[str, UserParameters] | None = None,
) -> dict[str, float]:
    """Return the user-given reorganisation energies (eV), by cofactor uid.

    Parameters
    ----------
    cofactors : iterable of Cofactor
        The cofactors of a structure.
    user_file : path, mapping or None, optional
        As for :func:`assign_potentials`.

    Returns
    -------
    dict of str to float
        Only the cofactors whose λ the file sets; the others keep the global λ.

    Raises
    ------
    fescan.errors.ConfigError
        As for :func:`assign_potentials`.
    """
    cofs = list(cofactors)
    params = _user_parameters(cofs, user_file)
    return {
        cof.uid: params[cof.key].reorganisation
        for cof in cofs
        if cof.key in params and params[cof.key].reorganisation is not None
    }
