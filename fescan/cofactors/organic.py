"""Organic cofactors of one model: hemes, flavins and quinones (a mixin of the detection builder).

The methods use the builder's candidate atoms (``cand``), their per-residue counts
(``comp``), environment (``env``) and record helper; see :mod:`fescan.cofactors.detect`.
"""

from __future__ import annotations

import numpy as np

from fescan.cofactors.atoms import AtomArrays
from fescan.cofactors.ligation import find_ligands
from fescan.cofactors.metal_sites import composition_string
from fescan.cofactors.rings import (
    isoalloxazine_atoms,
    porphyrin_atoms,
    quinone_kind,
    quinone_ring_atoms,
)
from fescan.core.records import Flag

__all__ = ["OrganicMixin"]

_THIOETHER_MAX = 2.1  # Å heme vinyl C - Cys SG in c-type hemes
_CXXCH_SG_MAX = 3.6  # Å: a CxxC pair this close to the vinyl carbons is an unmodelled heme c link


class OrganicMixin:
    """Hemes, flavins and quinones: builds their records into ``self.cofactors``."""

    def _ring_or_all(self, rows, found, what: str) -> tuple[list[int], list[Flag]]:
        if found is None:
            return list(rows), [Flag("redox_atoms_fallback", "note",
                                     f"{what} not found in the atoms: all atoms used for distances")]
        return [int(rows[i]) for i in found], []

    def _quinone_by_ring(self, rid: int, rows: np.ndarray) -> None:
        """A residue of unknown code holding a para-quinone/quinol ring (benzo- or naphthoquinone)."""
        comp = self.comp
        if comp.n[rid] < 8 or comp.metal[rid] or comp.c[rid] < 6 or comp.o[rid] < 2:
            return
        c = self.cand
        el = c.element[rows]
        found = quinone_kind(c.xyz[rows], el)
        if found is None:
            return
        kind, local = found
        cls = "naphthoquinone" if kind == "naphthoquinone" else "quinone"
        cof = self._record(
            c, rows, [int(rows[i]) for i in local], int(rows[0]), ccd_code=None, category="quinone", cls=cls,
            composition=composition_string(el), detected_by="geometry",
            flags=[Flag("found_by_ring", "note", f"code {c.resname[rows[0]]} is not in the table: found as a "
                        f"{kind} by its ring (two para O on a six-carbon ring)")],
        )
        self.cofactors.append((int(c.res_id[rows[0]]), cof))

    def _flavin(self, rows: np.ndarray, entry) -> bool:
        c = self.cand
        ring = isoalloxazine_atoms(c.xyz[rows], c.element[rows])
        if entry is None and ring is None:
            return False  # an unknown residue that is no flavin
        redox, flags = self._ring_or_all(rows, ring, "isoalloxazine ring")
        code = str(c.resname[rows[0]])
        cof = self._record(
            c, rows, redox, int(rows[0]), ccd_code=code if entry else None, category="flavin",
            cls=entry.cls if entry else "flavin", composition=composition_string(c.element[rows]),
            detected_by=("ccd+geometry" if ring is not None else "ccd") if entry else "geometry",
            flags=flags,
        )
        self.cofactors.append((int(c.res_id[rows[0]]), cof))
        return True

    def _quinone(self, rows: np.ndarray, entry) -> None:
        c = self.cand
        ring = quinone_ring_atoms(c.xyz[rows], c.element[rows])
        redox, flags = self._ring_or_all(rows, ring, "quinone ring with two terminal O")
        cof = self._record(
            c, rows, redox, int(rows[0]), ccd_code=str(c.resname[rows[0]]), category="quinone",
            cls=entry.cls, composition=composition_string(c.element[rows]),
            detected_by="ccd+geometry" if ring is not None else "ccd", flags=flags,
        )
        self.cofactors.append((int(c.res_id[rows[0]]), cof))

    def _heme(self, rid: int, rows: np.ndarray, fe: int | None, entry) -> None:
        c = self.cand
        flags: list[Flag] = []
        cls = entry.cls if entry else "heme"
        ligands: list = []
        extra: dict = {}
        if fe is not None:
            local = porphyrin_atoms(c.xyz[rows], c.element[rows], int(np.flatnonzero(rows == fe)[0]))
            redox, flags = self._ring_or_all(rows, local, "porphyrin macrocycle")
            env = self.env
            env_rows = self._env_rows(rows)
            env_fe = env_rows[list(rows).index(fe)]
            ligs, _ = find_ligands(env, [env_fe], set(env_rows), {rid}, tree=self._env_tree)
            ligands = [lig for _, lig in ligs]
            extra["axial_ligands"] = [f"{lig.kind} {lig.atom.residue}" for lig in ligands]
            linked = self._thioether_cys(env, env_rows, _THIOETHER_MAX)
            extra["thioether_links"] = len(linked)
            if linked and cls in ("heme b", "heme"):
                flags.append(Flag("heme_reclassified", "note",
                                  f"filed as {c.resname[rows[0]]} but bound to {len(linked)} Cys by thioether "
                                  f"link{'s' if len(linked) > 1 else ''}: classed as heme c"))
                cls = "heme c"
            elif cls in ("heme b", "heme"):
                near = self._thioether_cys(env, env_rows, _CXXCH_SG_MAX)
                pair = [(a, b) for a in near for b in near if a[0] == b[0] and b[1] - a[1] == 3]
                if pair:
                    (ch, n1, _), (_, n2, _) = pair[0]
                    flags.append(Flag("heme_reclassified", "note",
                                      f"filed as {c.resname[rows[0]]} with no thioether bonds modelled, but Cys "
                                      f"{ch}/{n1} and {ch}/{n2} (a CxxC motif) reach the vinyl carbons within "
                                      f"{_CXXCH_SG_MAX} Å: classed as heme c"))
                    cls = "heme c"
        else:
            redox, flags = self._ring_or_all(rows, None, "heme iron")
        cof = self._record(
            c, rows, redox, int(rows[0]), ccd_code=str(c.resname[rows[0]]) if entry else None,
            category="heme", cls=cls, composition=composition_string(c.element[rows]),
            detected_by=("ccd+geometry" if fe is not None else "ccd") if entry else "geometry",
            ligands=tuple(ligands), flags=flags, extra=extra,
        )
        self.cofactors.append((rid, cof))

    def _thioether_cys(self, env: AtomArrays, heme_rows: list[int], max_d: float) -> list[tuple[str, int, str]]:
        """Cys residues (chain, number, icode) whose SG lies within ``max_d`` Å of a heme carbon."""
        carbons = [r for r in heme_rows if env.element[r] == "C"]
        if not carbons:
            return []
        _, near, dist = self._env_tree.within(env.xyz[carbons], max_d)
        sg = {i for i, d in zip(near.tolist(), dist.tolist())
              if d < max_d and env.element[i] == "S" and env.name[i] == "SG"}
        return sorted({(str(env.chain[i]), int(env.seqnum[i]), str(env.icode[i])) for i in sg})
