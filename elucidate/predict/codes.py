"""Atom-environment codes for 13C shift look-up, in the style of HOSE codes.

Each carbon is described by a sequence of nested codes, one per *sphere*
(graph distance from the carbon).  Sphere 0 is the centre atom alone
(element, aromaticity, charge, hydrogen count); sphere ``k`` appends the shell
of heavy atoms first reached at distance ``k``.  Every shell atom carries a
*path label*: the label of the parent it was reached from, the bond to it and
its own token (element, aromatic flag, charge; atoms of sphere 1 also their
heavy-atom degree and hydrogen count), so that branches stay grouped as in
Bremser's codes.  Ring closures are marked in the shell where they close:
``&n`` counts atoms reached from two parents (an even ring through the
centre, size ``2k``), ``%n`` bonds inside the shell (an odd ring, size
``2k + 1``).

The idea of describing a nucleus by concentric spheres of neighbours follows
Bremser, *Anal. Chim. Acta* 1978, 103, 355 (HOSE code, citation from memory);
the encoding itself (characters, ordering, closure marks) is this project's own.

The same breadth-first pass also yields the additive *path features* used by
the ridge-regression fallback (`elucidate.predict.ridge`): for every atom at
distance 1–4 the centre type, the distance, the bond by which the atom is
reached and its token; for atoms at distance 2–4 also the whole path from
the centre (which carries the degree and H count of the neighbour in
between, i.e. branching); plus the ring sizes from the closure marks.  The
features are a function of the sphere-5 code string, so the code alone can
key a per-environment prediction cache.

Codes are plain strings; tables are keyed by a stable 64-bit BLAKE2b digest
of the string (`code_key`), so they do not depend on Python's per-process
hash seed.
"""

from __future__ import annotations

from dataclasses import dataclass
from hashlib import blake2b

from rdkit import Chem

__all__ = [
    "MAX_SPHERE",
    "FEATURE_DISTANCE",
    "MolGraph",
    "graph_from_mol",
    "carbon_environment",
    "sphere_codes",
    "path_features",
    "code_key",
]

#: Deepest sphere encoded.
MAX_SPHERE = 5
#: Deepest distance used by the additive path features.
FEATURE_DISTANCE = 4
#: Deepest distance at which whole paths (not only the end atom) are features.
PATH_FEATURE_DISTANCE = 4

_SYMBOL = {6: "C", 7: "N", 8: "O", 9: "F", 15: "P", 16: "S", 17: "Cl", 35: "Br", 53: "I"}

_BOND_CHAR = {
    Chem.BondType.SINGLE: "-",
    Chem.BondType.DOUBLE: "=",
    Chem.BondType.TRIPLE: "#",
    Chem.BondType.AROMATIC: ":",
}


@dataclass(frozen=True)
class MolGraph:
    """Heavy-atom graph of a molecule, in the form the code builder needs.

    Attributes
    ----------
    atom_index : tuple of int
        RDKit atom index of each heavy atom (local index -> RDKit index).
    symbol : tuple of str
        Element symbol per heavy atom.
    token : tuple of str
        Shell token per heavy atom: symbol, ``a`` if aromatic, charge marks.
    hydrogens : tuple of int
        Total hydrogen count per heavy atom (implicit + explicit + H atoms).
    adjacency : tuple of tuple of (int, str)
        Per heavy atom, its heavy neighbours as ``(local index, bond char)``,
        sorted for determinism.
    first_token : tuple of str
        Token used in sphere 1: ``token`` plus heavy degree, ``h`` and H count.
    """

    atom_index: tuple
    symbol: tuple
    token: tuple
    hydrogens: tuple
    adjacency: tuple
    first_token: tuple


def graph_from_mol(mol) -> MolGraph:
    """Extract the heavy-atom graph of a sanitized RDKit molecule.

    Explicit hydrogen atoms (if the molecule has any) are folded into the
    hydrogen count of their neighbour; they are not graph nodes.

    Parameters
    ----------
    mol : rdkit.Chem.Mol
        A sanitized molecule (RDKit default aromaticity).

    Returns
    -------
    MolGraph
    """
    n_atoms = mol.GetNumAtoms()
    local = [-1] * n_atoms
    atom_index = []
    symbol = []
    token = []
    hydrogens = []
    has_h_atoms = False
    get_atom = mol.GetAtomWithIdx
    for idx in range(n_atoms):
        atom = get_atom(idx)
        z = atom.GetAtomicNum()
        if z == 1:
            has_h_atoms = True
            continue
        local[idx] = len(atom_index)
        atom_index.append(idx)
        sym = _SYMBOL.get(z) or atom.GetSymbol()
        symbol.append(sym)
        charge = atom.GetFormalCharge()
        tok = sym + "a" if atom.GetIsAromatic() else sym
        if charge:
            tok += ("+" if charge > 0 else "-") * abs(charge)
        token.append(tok)
        hydrogens.append(atom.GetTotalNumHs())
    adjacency = [[] for _ in atom_index]
    get_bond = mol.GetBondWithIdx
    for bi in range(mol.GetNumBonds()):
        bond = get_bond(bi)
        a = local[bond.GetBeginAtomIdx()]
        b = local[bond.GetEndAtomIdx()]
        if a < 0 or b < 0:
            if has_h_atoms and (a >= 0 or b >= 0):
                hydrogens[a if a >= 0 else b] += 1
            continue
        ch = _BOND_CHAR.get(bond.GetBondType(), "~")
        adjacency[a].append((b, ch))
        adjacency[b].append((a, ch))
    return MolGraph(
        atom_index=tuple(atom_index),
        symbol=tuple(symbol),
        token=tuple(token),
        hydrogens=tuple(hydrogens),
        adjacency=tuple(tuple(sorted(nb)) for nb in adjacency),
        first_token=tuple(f"{t}{len(nb)}h{h}" for t, nb, h in zip(token, adjacency, hydrogens)),
    )


def centre_token(graph: MolGraph, i: int) -> str:
    """Sphere-0 code of atom ``i``: its token and hydrogen count."""
    return f"{graph.token[i]}H{graph.hydrogens[i]}"


def centre_type(graph: MolGraph, i: int) -> str:
    """Coarse atom type used by the additive fallback: sphere-0 code plus the
    set of bond orders at the centre (e.g. ``CH2|-=``)."""
    bonds = "".join(sorted({b for _, b in graph.adjacency[i]}))
    return f"{centre_token(graph, i)}|{bonds}"


def carbon_environment(graph: MolGraph, i: int, features: bool = True):
    """Environment codes (spheres 0..MAX_SPHERE) and path features of atom ``i``.

    Breadth-first search from the centre; see the module docstring for the
    encoding.

    Parameters
    ----------
    graph : MolGraph
    i : int
        Local (heavy-atom) index of the centre.
    features : bool
        Also return the additive path features.

    Returns
    -------
    codes : list of str
        ``codes[k]`` is the sphere-``k`` code, ``k = 0 .. MAX_SPHERE``.
    feats : list of str
        Path features, the centre type first (empty when ``features`` is
        false).
    """
    adjacency = graph.adjacency
    hydrogens = graph.hydrogens
    n = len(hydrogens)
    code = f"{graph.token[i]}H{hydrogens[i]}"
    codes = [code]
    feats = []
    if features:
        ctype = code + "|" + "".join(sorted({b for _, b in adjacency[i]}))
        feats.append(ctype)
    dist = [-1] * n
    dist[i] = 0
    label = [""] * n
    frontier = [i]
    for k in range(1, MAX_SPHERE + 1):
        found = {}
        multi = 0
        token = graph.first_token if k == 1 else graph.token
        for p in frontier:
            lp = label[p]
            for q, b in adjacency[p]:
                if dist[q] >= 0:
                    continue
                lab = lp + b + token[q]
                old = found.get(q)
                if old is None:
                    found[q] = lab
                else:
                    multi += 1
                    if lab < old:
                        found[q] = lab
        # bonds inside the new shell (odd rings through the centre)
        inner = 0
        if len(found) > 1:
            for q in found:
                for r, _ in adjacency[q]:
                    if r in found:
                        inner += 1
        if found:
            code = code + "/" + ",".join(sorted(found.values()))
        else:
            code = code + "/"
        if inner:
            code += f"%{inner // 2}"
        if multi:
            code += f"&{multi}"
        codes.append(code)
        if features and k <= FEATURE_DISTANCE:
            if inner:
                feats.append(f"{ctype}|ring{2 * k + 1}")
            if multi:
                feats.append(f"{ctype}|ring{2 * k}")
            pre = f"{ctype}|{k}|"
            if k == 1:
                for lab in found.values():
                    feats.append(pre + lab)
            elif k <= PATH_FEATURE_DISTANCE:
                for q, lab in found.items():
                    # the whole path, and bond + token of the atom
                    feats.append(pre + lab)
                    feats.append(pre + "*" + lab[-(len(token[q]) + 1):])
            else:
                for q, lab in found.items():
                    feats.append(pre + "*" + lab[-(len(token[q]) + 1):])
        if not found:
            # molecule exhausted: deeper codes repeat with an empty shell
            for _ in range(k + 1, MAX_SPHERE + 1):
                code = code + "/"
                codes.append(code)
            break
        for q, lab in found.items():
            dist[q] = k
            label[q] = lab
        frontier = list(found)
    return codes, feats


def _shell_steps(graph: MolGraph):
    """Per-graph tables for :func:`sphere_codes`: for every atom its heavy
    neighbours with the label suffix (bond char + token) they get when reached
    from it beyond sphere 1, and its neighbour indices alone."""
    token = graph.token
    step = []
    around = []
    for nb in graph.adjacency:
        step.append([(q, b + token[q]) for q, b in nb])
        around.append([q for q, _ in nb])
    return step, around


def sphere_codes(graph: MolGraph, i: int, steps=None, shells=None) -> list:
    """The codes of :func:`carbon_environment` (spheres 0..MAX_SPHERE) alone.

    The same breadth-first search, with the label suffixes of every neighbour
    precomputed once per graph (``steps``, from ``_shell_steps``; pass it when
    coding several centres of one graph).  The strings are identical to
    ``carbon_environment(graph, i)[0]``.  With a list ``shells``, each sphere's
    ``({atom: path label}, inner bonds x 2, extra parents)`` is appended to it
    (for :func:`path_features`).
    """
    step, around = steps if steps is not None else _shell_steps(graph)
    code = f"{graph.token[i]}H{graph.hydrogens[i]}"
    codes = [code]
    first = graph.first_token
    # sphere 1: the neighbours, each reached once
    found = {q: b + first[q] for q, b in graph.adjacency[i]}
    label = {i: ""}  # atoms reached so far (all earlier spheres) -> path label
    k = 1
    multi = 0
    while True:
        if not found:
            if shells is not None:
                shells.append((found, 0, 0))
            # molecule exhausted: this and deeper codes repeat with an empty shell
            for _ in range(k, MAX_SPHERE + 1):
                code = code + "/"
                codes.append(code)
            break
        # bonds inside the new shell (odd rings through the centre)
        inner = 0
        if len(found) > 1:
            for q in found:
                for r in around[q]:
                    if r in found:
                        inner += 1
        code = code + "/" + ",".join(sorted(found.values()))
        if inner:
            code += f"%{inner // 2}"
        if multi:
            code += f"&{multi}"
        codes.append(code)
        if shells is not None:
            shells.append((found, inner, multi))
        if k == MAX_SPHERE:
            break
        label.update(found)
        frontier = found
        found = {}
        multi = 0
        for p in frontier:
            lp = label[p]
            for q, suffix in step[p]:
                if q in label:
                    continue
                lab = lp + suffix
                old = found.get(q)
                if old is None:
                    found[q] = lab
                else:
                    multi += 1
                    if lab < old:
                        found[q] = lab
        k += 1
    return codes


def path_features(graph: MolGraph, i: int, shells) -> list:
    """The path features of :func:`carbon_environment` from the shells that
    :func:`sphere_codes` recorded (the same strings in the same order)."""
    ctype = f"{graph.token[i]}H{graph.hydrogens[i]}|" + "".join(sorted({b for _, b in graph.adjacency[i]}))
    feats = [ctype]
    token = graph.token
    for k, (found, inner, multi) in enumerate(shells[:FEATURE_DISTANCE], start=1):
        if inner:
            feats.append(f"{ctype}|ring{2 * k + 1}")
        if multi:
            feats.append(f"{ctype}|ring{2 * k}")
        pre = f"{ctype}|{k}|"
        if k == 1:
            feats.extend([pre + lab for lab in found.values()])
        elif k <= PATH_FEATURE_DISTANCE:
            star = pre + "*"
            for q, lab in found.items():
                feats.append(pre + lab)
                feats.append(star + lab[-(len(token[q]) + 1):])
        else:
            star = pre + "*"
            feats.extend([star + lab[-(len(token[q]) + 1):] for q, lab in found.items()])
    return feats


def code_key(code: str) -> int:
    """Stable 64-bit key of a code string (BLAKE2b digest, as unsigned int)."""
    return int.from_bytes(blake2b(code.encode(), digest_size=8).digest(), "little")
