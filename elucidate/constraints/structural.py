"""Structure filters the user asks for: substructures, rings, plausibility.

Each builder returns :class:`~elucidate.generate.StructureFilter` objects
(name + keep-predicate) that the generator applies to every new
constitution and counts, so a run can say how many structures each removed.

Plausibility motifs
-------------------
``implausible_motif_filters`` drops motifs that are valid graphs but that a
chemist would not expect as an isolated, neutral, stable sample.  They are
listed in :data:`IMPLAUSIBLE_MOTIFS` with the reason; the ``solve`` command
drops only the ones marked ``default=True`` (see ``docs/constraints.md``
for the frequencies in the open nmrshiftdb2 training data that justify the
choice), and ``--allow-all`` keeps everything.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

from rdkit import Chem, rdBase

from ..errors import InputError
from ..generate import StructureFilter

__all__ = [
    "Motif",
    "IMPLAUSIBLE_MOTIFS",
    "smarts_filters",
    "ring_filters",
    "implausible_motif_filters",
    "compile_smarts",
]


@dataclass(frozen=True)
class Motif:
    """A named substructure considered implausible, with the reason.

    ``gate`` is an optional plain SMARTS that every molecule with the motif
    matches; it is tried first, so a motif written as a long recursive SMARTS
    costs little on the many molecules that cannot have it.
    """

    name: str
    smarts: str
    reason: str
    default: bool  # dropped by ``solve`` unless --allow-all
    gate: str | None = None

    def matcher(self):
        """``mol -> bool``: whether a molecule contains the motif."""
        q = Chem.MolFromSmarts(self.smarts)
        if self.gate is None:
            return lambda m: m.HasSubstructMatch(q)
        g = Chem.MolFromSmarts(self.gate)
        return lambda m: m.HasSubstructMatch(g) and m.HasSubstructMatch(q)


def _bridged_aromatic_smarts(max_ring: int = 8) -> str:
    """An aromatic five- or six-membered ring whose atoms 1,3 (or 1,4) are
    joined outside the ring by a bridge closing a ring of at most
    ``max_ring`` atoms (a meta- or para-cyclophane with a short bridge)."""
    alts = []
    for size, gaps in ((5, (2,)), (6, (2, 3))):
        for gap in gaps:  # ring bonds between the two bridgeheads on the short side
            for k in range(1, max_ring - gap):  # bridge atoms; the bridged ring has k + gap + 1 atoms
                ring = "a12" + ":a" * (gap - 1) + ":a(" + ":a" * (size - gap - 1) + ":1)"
                alts.append(ring + "!:*" * k + "!:2")
    return "[$(" + "),$(".join(alts) + ")]"


def _bridgehead_alkene_smarts(max_atoms: int = 8) -> str:
    """A double bond at a bridgehead carbon or nitrogen of a bridged bicycle
    of at most ``max_atoms`` atoms (bridges a, b, c >= 1 atoms; Fawcett's
    S = a + b + c <= max_atoms - 2)."""
    alts = []
    for a in range(1, max_atoms):
        for b in range(1, max_atoms):
            for c in range(b, max_atoms):
                if a + b + c + 2 > max_atoms:
                    continue
                alts.append("[#6,#7]12=" + "~".join(["*"] * a) + "~*(" + "~*" * b + "~1)" + "~*" * c + "~2")
    return "[$(" + "),$(".join(alts) + ")]"


IMPLAUSIBLE_MOTIFS: tuple[Motif, ...] = (
    Motif("peroxide", "[OX2]-[OX2]", "O-O bonds are rare, unstable and rarely the unknown", False),
    Motif("allene", "[CX3]=[CX2]=[CX3]", "cumulated C=C=C double bonds", False),
    Motif(
        "simple enol",
        "[OX2H1]-[CX3;!a;!$(*-[#6]=[O,N,S]);!$(*-[#6]#N)]=[CX3;!a;!$(*-[#6]=[O,N,S]);!$(*-[#6]#N)]",
        "enols not stabilised by a neighbouring carbonyl or nitrile tautomerise to the keto form",
        True,
    ),
    Motif("gem-diol", "[OX2H1][CX4][OX2H1]", "carbonyl hydrates lose water", True),
    Motif(
        "hemiacetal/hemiaminal",
        "[OX2H1][CX4;!R][OX2,NX3]",
        "open-chain hemiacetals and hemiaminals fall apart",
        True,
    ),
    Motif("small ring (3)", "[r3]", "three-membered ring", False),
    Motif("small ring (4)", "[r4]", "four-membered ring", False),
    Motif(
        "triple bond in small ring",
        "[r3,r4,r5,r6,r7]#;@[r3,r4,r5,r6,r7]",
        "a triple bond cannot sit in a ring of fewer than eight atoms",
        True,
    ),
    Motif(
        "cumulene in small ring",
        "*=;@[r3,r4,r5,r6,r7]=;@*",
        "cumulated double bonds cannot sit in a ring of fewer than eight atoms",
        True,
    ),
    Motif(
        "bridged aromatic ring",
        _bridged_aromatic_smarts(8),
        "an aromatic ring bridged 1,3 or 1,4 by a short chain (closing a ring of at most eight "
        "atoms) is too strained to stay planar",
        True,
        gate="[a;x3,x4]",
    ),
    Motif(
        "bridgehead double bond in small bicycle",
        _bridgehead_alkene_smarts(8),
        "a double bond at a bridgehead of a bicycle of at most eight ring atoms violates Bredt's rule",
        True,
        gate="[#6,#7;x3,x4]=*",
    ),
    Motif(
        "cyclobutadiene",
        "*1=*-*=*-1",
        "two double bonds in a four-membered ring (antiaromatic, dimerises)",
        True,
    ),
)


def compile_smarts(pattern: str, option: str) -> Chem.Mol:
    """Compile a SMARTS pattern or raise InputError naming the option."""
    with rdBase.BlockLogs():  # our one-line error replaces RDKit's parser log
        query = Chem.MolFromSmarts(pattern) if isinstance(pattern, str) and pattern.strip() else None
    if query is None:
        raise InputError(
            f"{option} {pattern!r} is not valid SMARTS; write e.g. '[CX3]=O' for a carbonyl "
            "(quote it in the shell)"
        )
    return query


def smarts_filters(require: Sequence[str] = (), forbid: Sequence[str] = ()) -> list[StructureFilter]:
    """Filters for required and forbidden substructures (SMARTS).

    Examples
    --------
    >>> f = smarts_filters(require=["[OX2H]"])[0]
    >>> f.keep(Chem.MolFromSmiles("CCO")), f.keep(Chem.MolFromSmiles("COC"))
    (True, False)
    """
    out = []
    for pat in require:
        q = compile_smarts(pat, "--require")
        out.append(StructureFilter(f"require {pat}", lambda m, q=q: m.HasSubstructMatch(q)))
    for pat in forbid:
        q = compile_smarts(pat, "--forbid")
        out.append(StructureFilter(f"forbid {pat}", lambda m, q=q: not m.HasSubstructMatch(q)))
    return out


def ring_filters(
    max_rings: int | None = None,
    min_ring_size: int | None = None,
    max_ring_size: int | None = None,
) -> list[StructureFilter]:
    """Filters on the number of rings (SSSR) and the size of every ring.

    Examples
    --------
    >>> f = ring_filters(max_rings=0)[0]
    >>> f.keep(Chem.MolFromSmiles("C1CC1")), f.keep(Chem.MolFromSmiles("CCC"))
    (False, True)
    """
    out = []
    for name, value in (("max-rings", max_rings), ("min-ring-size", min_ring_size), ("max-ring-size", max_ring_size)):
        if value is not None and value < 0:
            raise InputError(f"--{name} must be zero or positive, got {value}")
    if min_ring_size is not None and max_ring_size is not None and min_ring_size > max_ring_size:
        raise InputError(
            f"--min-ring-size {min_ring_size} exceeds --max-ring-size {max_ring_size}: no ring could "
            "satisfy both; swap them, or use --max-rings 0 for structures without rings"
        )
    if max_rings is not None:
        out.append(
            StructureFilter(
                f"at most {max_rings} rings",
                lambda m: m.GetRingInfo().NumRings() <= max_rings,
            )
        )
    if min_ring_size is not None or max_ring_size is not None:
        lo = min_ring_size or 3
        hi = max_ring_size or 10**6

        def sizes_ok(m):
            return all(lo <= len(r) <= hi for r in m.GetRingInfo().AtomRings())

        out.append(StructureFilter(f"ring sizes {lo}..{max_ring_size or 'any'}", sizes_ok))
    return out


def implausible_motif_filters(only_default: bool = True) -> list[StructureFilter]:
    """Filters dropping implausible motifs (the default set, or all of them)."""
    out = []
    for motif in IMPLAUSIBLE_MOTIFS:
        if only_default and not motif.default:
            continue
        has = motif.matcher()
        out.append(StructureFilter(f"no {motif.name}", lambda m, has=has: not has(m)))
    return out
