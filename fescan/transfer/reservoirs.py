"""Reservoirs of a wire and its steady state: the pool feeding the entry, the pool draining the exit.

Default reservoirs by the role of the entry and exit (values from the packaged
table, ``reservoir`` rows, each with its citation; per-electron midpoints of the
n-electron couples at pH 7):

* entry: a hydrogenase site → H⁺/H2 at pH 7; a flavin of the SDH/QFR family →
  fumarate/succinate; another flavin (substrate-oxidising) → NAD⁺/NADH; a
  menaquinone, or the [3Fe-4S] next to the quinol site of a type D fumarate
  reductase → the menaquinone pool; photosystem II QA → the reduced pheophytin
  that feeds it; a ubiquinone → the ubiquinone pool; a plastoquinone → the
  plastoquinone pool; CuA → soluble cytochrome c;
* exit: a quinone → its pool (ubiquinone, menaquinone, plastoquinone); the last
  [4Fe-4S] of complex I (N2, which reduces ubiquinone) → the ubiquinone pool; the
  [3Fe-4S] next to the quinone site of SDH/QFR → the ubiquinone pool (with heme)
  or the menaquinone pool (no heme, type D);
  heme a3 → O2/H2O; a flavin of the SDH/QFR family → fumarate/succinate.

Anything else is undetermined: the steady state is then not solved and the wire
says which ``[reservoirs]`` value to give (``source``, ``sink`` in V in the
parameter file). The user's values always win.

The kinetic model runs over the sites of the path (a chain; side branches are
left out and the output says so), each relay holding 0/1 electron, a flavin or
quinone 0/1/2 with its two couples (a one-electron carrier such as photosystem
II QA keeps one couple), hops in both directions from the rate law, solved by
:mod:`fescan.transfer.steady_state`. Besides flux, occupancy, flux-control
coefficients and sensitivities, the transit time at steady state is reported:
electrons on the path divided by the flux (Little's law, Little 1961, Oper Res
9:383), the mean time an electron spends between entry and exit. All numbers
are model estimates.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

import networkx as nx

from fescan.core.errors import ConfigError
from fescan.transfer.couples import Potential, reservoir_potential
from fescan.transfer.graph import Hop

__all__ = ["Reservoir", "default_reservoirs", "wire_steady_state"]


@dataclass(frozen=True, slots=True)
class Reservoir:
    """A pool feeding or draining a wire: its name and potential (V, with source)."""

    label: str
    potential: Potential


def _pool(name: str) -> Reservoir:
    return Reservoir(name, reservoir_potential(name))


_QUINONE_POOL = {"ubiquinone": "ubiquinone pool in membranes", "menaquinone": "menaquinone pool",
                 "plastoquinone": "plastoquinone pool"}


def _source(g: nx.DiGraph, uid: str) -> Reservoir | None:
    c = g.nodes[uid]["cofactor"]
    sub = g.nodes[uid]["parameters"].subclass if "parameters" in g.nodes[uid] else c.subclass
    if c.cls in ("NiFe", "H-cluster") or c.cls.startswith("NiFe"):
        return _pool("H+/H2 at pH 7")
    if c.category == "flavin":
        return _pool("fumarate/succinate") if _in_sdh(g, uid) else _pool("NAD+/NADH")
    if c.category == "quinone" and "QA" in sub:
        return _pool("pheophytin (photosystem II)")
    if c.category == "quinone" and c.cls in _QUINONE_POOL:
        return _pool(_QUINONE_POOL[c.cls])
    if c.cls == "[3Fe-4S]" and sub == "SDH/QFR-type":
        return _pool("menaquinone pool")
    if c.cls == "CuA":
        return _pool("cytochrome c (soluble)")
    return None


def _sink(g: nx.DiGraph, uid: str) -> Reservoir | None:
    c = g.nodes[uid]["cofactor"]
    sub = g.nodes[uid]["parameters"].subclass if "parameters" in g.nodes[uid] else c.subclass
    if c.category == "quinone" and c.cls in _QUINONE_POOL and "QB" not in sub:
        return _pool(_QUINONE_POOL[c.cls])
    if c.category == "quinone" and "QB" in sub:
        return _pool("plastoquinone pool")
    if sub == "complex I N2":
        return _pool("ubiquinone pool in membranes")
    if c.cls == "[3Fe-4S]" and sub == "SDH/QFR-type":  # next to the quinone site of SDH/QFR
        heme = any(g.nodes[n]["cofactor"].category == "heme"
                   for n in nx.node_connected_component(g.to_undirected(as_view=True), uid))
        return _pool("ubiquinone pool in membranes" if heme else "menaquinone pool")
    if sub == "heme a3":
        return _pool("O2/H2O")
    if c.category == "flavin" and _in_sdh(g, uid):
        return _pool("fumarate/succinate")
    return None


def _in_sdh(g: nx.DiGraph, uid: str) -> bool:
    comp = nx.node_connected_component(g.to_undirected(as_view=True), uid)
    return any(g.nodes[n].get("parameters") is not None and g.nodes[n]["parameters"].subclass == "SDH/QFR-type"
               for n in comp)


def _user(label: str, value: float, path: str) -> Reservoir:
    return Reservoir(f"user {label}", Potential(value, value, value, f"user value ({path})", f"user file {path}",
                                                "user", f"{label} reservoir", "1e", "user value"))


def default_reservoirs(g: nx.DiGraph, entry: str, exit_: str, user: Mapping[str, float] | None = None,
                       user_path: str = "") -> tuple[Reservoir | None, Reservoir | None]:
    """Source and sink reservoirs of a wire (module docstring); ``None`` where no rule applies."""
    user = user or {}
    src = _user("source", user["source"], user_path) if "source" in user else _source(g, entry)
    snk = _user("sink", user["sink"], user_path) if "sink" in user else _sink(g, exit_)
    return src, snk


def _site(g: nx.DiGraph, uid: str, entry: bool) -> tuple[float, ...]:
    p = g.nodes[uid].get("parameters")
    if p is None or not p.two_electron or p.one_electron_carrier:
        e = (p.working(entry=False) if p is not None else g.nodes[uid]["potential"]).e_v
        return (e if math.isfinite(e) else 0.0,)
    return tuple(p.couple(s).e_v for s in ("ox/sq", "sq/red"))


def wire_steady_state(g: nx.DiGraph, path: list[str], hops: list[Hop], temperature: float,
                      source: Reservoir, sink: Reservoir) -> dict:
    """Solve the steady state of the path between two reservoirs; a JSON-ready dict keyed by uid.

    Raises
    ------
    fescan.core.errors.ConfigError
        When the model cannot be built or solved (the caller reports it as a note).
    """
    from fescan.transfer.steady_state import steady_state

    if not (source.potential.determined and sink.potential.determined):
        raise ConfigError("a reservoir potential is undetermined")
    sites = [_site(g, u, k == 0) for k, u in enumerate(path)]
    ss = steady_state(sites, [h.edge for h in hops], source.potential.e_v, sink.potential.e_v,
                      reorg=[h.reorg for h in hops], packing_density=[h.packing_density for h in hops],
                      temperature=temperature, names=list(path))
    d = ss.to_dict()
    steps = [tuple(s) for s in d["steps"]]
    control = [{"donor": a, "acceptor": b, "coefficient": c} for (a, b), c in zip(steps, d["control"])]
    flux = d["flux_per_s"]
    on_path = sum(x for x in d["occupancy"] if x is not None)
    transit = on_path / flux if flux and flux > 0 else None
    out = {
        "flux_per_s": d["flux_per_s"],
        "occupancy": dict(zip(path, d["occupancy"])),
        "control": control,
        "sensitivity": dict(zip(path, d["sensitivity"])),
        "sensitivity_couples": dict(zip(path, d["sensitivity_couples"])),
        "sensitivity_source": d["sensitivity_source"],
        "sensitivity_sink": d["sensitivity_sink"],
        "source": {"pool": source.label, "e_v": source.potential.e_v, "source": source.potential.source,
                   "basis": source.potential.basis},
        "sink": {"pool": sink.label, "e_v": sink.potential.e_v, "source": sink.potential.source,
                 "basis": sink.potential.basis},
        "source_label": source.label,
        "sink_label": sink.label,
        "method": d["method"],
        "n_states": d["n_states"],
        "transit_time_s": transit,
        "transit_time": "electrons on the path / flux: the mean time an electron spends on the path at steady "
                        "state (Little's law; Little 1961, Oper Res 9:383)",
        "first_passage_time_s": d["first_passage_time_s"],
        "first_passage": d.get("first_passage", "one electron entering an oxidised chain"),
        "sites": "the sites of the path only (side branches left out)",
        "note": "model estimate from the rate law, not a measurement",
    }
    return out
