"""Numbered references of a report: every source said once, cited as ``[n]``.

A report cites the fixed sources of fescan's method (the rate law, the bond
windows, the coordinate error) and the source text of each default value it
used; :class:`References` numbers them in order of first citation, so a source
shared by eighteen hemes is listed once.
"""

from __future__ import annotations

from fescan.report.content import BulletList, Heading, Paragraph

__all__ = ["References", "RATE_LAW", "RATE_LAW_1992", "BOND_WINDOWS", "COORDINATE_ERROR", "CORE_GEOMETRY",
           "STRESS_LAYOUT", "KINETIC_MODEL"]

#: The tunnelling law and its 14 Å rule.
RATE_LAW = ("Page CC, Moser CC, Chen X, Dutton PL (1999) Natural engineering principles of electron tunnelling "
            "in biological oxidation-reduction. Nature 402:47-52")
#: The 1992 form of the law.
RATE_LAW_1992 = ("Moser CC, Keske JM, Warncke K, Farid RS, Dutton PL (1992) Nature of biological electron transfer. "
                 "Nature 355:796-802")
#: Fe-S(Cys) and Fe-N(His) restraint targets (from memory: the attribution of the library values).
BOND_WINDOWS = ("Moriarty NW, Adams PD (2019) Iron-sulfur clusters have no right angles. Acta Cryst D 75:16-20 "
                "(Fe-S(Cys), Fe-N(His) targets and sigmas of the cctbx restraint library; attribution from memory)")
#: Cluster core geometry (Fe-S bridge, Fe...Fe).
CORE_GEOMETRY = "Rao PV, Holm RH (2004) Synthetic analogues of the active sites of iron-sulfur proteins. Chem Rev 104:527-559"
#: Overall coordinate error.
COORDINATE_ERROR = ("Cruickshank DWJ (1999) Remarks about protein structure precision. Acta Cryst D 55:583-601; "
                    "rule of thumb d_min/10 without a deposited value (from memory)")
#: The flat layout of the diagrams.
STRESS_LAYOUT = ("Gansner ER, Koren Y, North S (2005) Graph drawing by stress majorization. Graph Drawing 2004, "
                 "LNCS 3383:239-250")
#: Occupancy master equations of a chain of centres.
KINETIC_MODEL = ("Moser CC, Farid TA, Chobot SE, Dutton PL (2006) Electron tunneling chains of mitochondria. "
                 "Biochim Biophys Acta 1757:1096-1109")


class References:
    """Sources numbered in order of first citation.

    Examples
    --------
    >>> r = References()
    >>> r.cite("Paper A"), r.cite("Paper B"), r.cite("Paper A")
    ('[1]', '[2]', '[1]')
    """

    def __init__(self) -> None:
        self._items: list[str] = []

    def number(self, source: str) -> int:
        """The number of a source (added when new)."""
        text = " ".join(str(source).split())
        if text not in self._items:
            self._items.append(text)
        return self._items.index(text) + 1

    def cite(self, *sources: str) -> str:
        """Citation marker of one or more sources, e.g. ``"[1, 3]"``."""
        nums = sorted({self.number(s) for s in sources if s})
        return f"[{', '.join(str(n) for n in nums)}]" if nums else ""

    def __len__(self) -> int:
        return len(self._items)

    def blocks(self, anchor: str = "references") -> list:
        """The references section: a heading and a numbered list."""
        if not self._items:
            return []
        return [Heading(2, "References", anchor),
                Paragraph("Sources of the law, the reference geometry and every default value used above, "
                          "numbered as cited."),
                BulletList(list(self._items), ordered=True)]
