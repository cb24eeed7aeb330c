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
    """A named substructure considered implausible, with the reason."""

    name: str
    smarts: str
    reason: str
    default: bool  # dropped by ``solve`` unless --allow-all


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
        q = Chem.MolFromSmarts(motif.smarts)
        out.append(StructureFilter(f"no {motif.name}", lambda m, q=q: not m.HasSubstructMatch(q)))
    return out
