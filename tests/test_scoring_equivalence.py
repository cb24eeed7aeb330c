"""The fast scoring path gives exactly what the straightforward code gives.

The scorer behind ``rank_structure``, ``EnvironmentTable.mol_rarity`` and
``EnvironmentRule.structure_cost`` was rewritten for speed (shared work,
plain-Python Hungarian scan, skipped scans that cannot win, cached per-carbon
costs).  Each check below compares it, to the last bit, with a deliberately
simple reference kept in this file: the implementation it replaced (project
code as of commit dd6407b), not stored numbers, so the shipped tables may change
without touching this test.

Molecules: common compounds (structures from memory) and invented drug-like
structures, chosen to cover aromatic and heteroaromatic rings, amides and other
rotamer-prone groups, halogens, S and P, charged groups, explicit hydrogens and
a molecule with more Kekulé structures than the enumeration limit.  Peak lists
are invented from the reference predictions with seeded perturbations
(overlaps, extra lines, unknown multiplicities, carbon counts).
"""

from __future__ import annotations

import math
import random

import numpy as np
import pytest
from rdkit import Chem, rdBase

from elucidate.constraints import environments as env
from elucidate.constraints.environments import EnvironmentRule, environment_keys, kekule_forms, load_environment_table
from elucidate.constraints.spectral import carbon_classes
from elucidate.pipeline import rank_structure
from elucidate.predict import predict_mol
from elucidate.predict.codes import (
    FEATURE_DISTANCE,
    MAX_SPHERE,
    PATH_FEATURE_DISTANCE,
    _shell_steps,
    carbon_environment,
    code_key,
    graph_from_mol,
    path_features,
    sphere_codes,
)
from elucidate.predict.model import load_search_model
from elucidate.rank import rotamers
from elucidate.rank.assignment import OVERLAP_COST, SPLIT_COST, UNFILLED_COST, CarbonClass, LineEntry, assign_lines
from elucidate.rank.cover import CoverRow, cover_cost, cover_cost_lists, min_offset_cover
from elucidate.rank.hungarian import solve_assignment, solve_assignment_lists
from elucidate.rank.likelihood import shift_cost_matrix
from elucidate.spectrum.peaks import Peak

#: Six separate benzene rings: 2**6 = 64 Kekulé structures, more than the limit of 32.
HEXAPHENYLETHANE = "c1ccc(C(c2ccccc2)(c2ccccc2)C(c2ccccc2)(c2ccccc2)c2ccccc2)cc1"

# Common compounds (structures from memory) and invented structures.
MOLECULES = [
    "Cc1ccccc1",  # toluene
    "c1ccncc1",  # pyridine
    "CN(C)C=O",  # N,N-dimethylformamide
    "CCN(CC)C(=O)c1cccc(C)c1",  # DEET
    "CC(=O)Nc1ccc(O)cc1",  # paracetamol
    "CC(C)Cc1ccc(C(C)C(=O)O)cc1",  # ibuprofen
    "CN1CCC[C@H]1c1cccnc1",  # nicotine
    "Cn1cnc2c1c(=O)n(C)c(=O)n2C",  # caffeine
    "CC(=O)Oc1ccccc1C(=O)O",  # acetylsalicylic acid
    "CCOC(=O)c1ccc(N)cc1",  # benzocaine
    "CCN(CC)CC(=O)Nc1c(C)cccc1C",  # lidocaine
    "O=C(O)c1ccccc1O",  # salicylic acid
    "c1ccc2[nH]ccc2c1",  # indole
    "c1ccsc1",  # thiophene
    "c1ccoc1",  # furan
    "c1cnc[nH]1",  # imidazole
    "c1cncnc1",  # pyrimidine
    "c1ccc2ncccc2c1",  # quinoline
    "c1ccc2cc3ccccc3cc2c1",  # anthracene
    "c1cc2ccc3cccc4ccc(c1)c2c34",  # pyrene
    "Clc1ccc(Cl)cc1",  # 1,4-dichlorobenzene
    "Fc1ccccc1Br",  # 1-bromo-2-fluorobenzene
    "Ic1ccc(C)cc1",  # 4-iodotoluene
    "FC(F)(F)c1ccccc1",  # benzotrifluoride
    "CS(C)=O",  # dimethyl sulfoxide
    "CSc1ccccc1",  # thioanisole
    "Cc1ccc(S(N)(=O)=O)cc1",  # p-toluenesulfonamide
    "CC(N)=S",  # thioacetamide
    "CCOP(=O)(OCC)OCC",  # triethyl phosphate
    "O=P(c1ccccc1)(c1ccccc1)c1ccccc1",  # triphenylphosphine oxide
    "COP(=O)(OC)Cc1ccccc1",  # dimethyl benzylphosphonate
    "O=[N+]([O-])c1ccccc1",  # nitrobenzene
    "[O-][n+]1ccccc1",  # pyridine N-oxide
    "C[N+](C)(C)Cc1ccccc1",  # benzyltrimethylammonium
    "CC(=O)[O-]",  # acetate
    "CC#N",  # acetonitrile
    "C#Cc1ccccc1",  # phenylacetylene
    "N#Cc1ccc(C=O)cc1",  # 4-formylbenzonitrile
    "CC1=CC(=O)C=CC1=O",  # 2-methyl-1,4-benzoquinone
    "C1=CC=CC=CC=C1",  # cyclooctatetraene (not aromatic)
    "CCCCCCCC",  # octane
    "CC(C)(C)OC(=O)N1CCCCC1",  # N-Boc piperidine (carbamate)
    "CN(C)C(=O)N(C)C",  # tetramethylurea
    "CN(C)N=O",  # N-nitrosodimethylamine
    "CN(C)C=CC(C)=O",  # vinylogous amide
    "CN(C)c1ccccc1",  # N,N-dimethylaniline
    "O=C(c1ccccc1)n1ccnc1",  # N-benzoylimidazole
    "OCC1OC(O)C(O)C(O)C1O",  # glucose, no stereo
    "CC(=O)OCC(=O)c1ccc(F)cc1",  # invented
    "COc1ccc(CC(=O)N2CCN(C)CC2)cc1Cl",  # invented
    "CCOC(=O)c1cnc(N)s1",  # invented
    "O=C(Nc1ccccc1F)c1ccc(Br)o1",  # invented
    "CSc1nc(C)cc(OCC2CC2)n1",  # invented
    "Cc1nc2ccccc2n1CC(=O)OC(C)(C)C",  # invented
    "O=C(O)CCc1nc(-c2ccccc2)c(-c2ccccc2)o1",  # invented
    "CC(C)NCC(O)COc1cccc2ccccc12",  # propranolol
    "c1ccc(C(c2ccccc2)(c2ccccc2)C(c2ccccc2)(c2ccccc2)c2ccccc2)cc1",  # hexaphenylethane
    "[H]C([H])([H])c1ccccc1",  # toluene with explicit H atoms
    "O=C1NC(=O)c2ccccc21",  # phthalimide
    "Cc1ccc2c(c1)c1ccccc1n2C",  # invented carbazole
    "O=S1(=O)CCCC1",  # sulfolane
]


# --------------------------------------------------------------------------
# Reference implementations (the code the fast path replaced)


def ref_kekule_forms(mol, limit=32):
    if not any(a.GetIsAromatic() for a in mol.GetAtoms()):
        return [mol]
    forms = []
    with rdBase.BlockLogs():
        try:
            supplier = Chem.ResonanceMolSupplier(mol, Chem.ResonanceFlags.KEKULE_ALL)
            for i, form in enumerate(supplier):
                if form is None:
                    continue
                if any(a.GetFormalCharge() != b.GetFormalCharge() for a, b in zip(form.GetAtoms(), mol.GetAtoms())):
                    continue
                forms.append(form)
                if i + 1 >= limit:
                    break
        except (RuntimeError, ValueError):
            forms = []
    if not forms:
        kek = Chem.Mol(mol)
        try:
            Chem.Kekulize(kek, clearAromaticFlags=True)
            forms = [kek]
        except (RuntimeError, ValueError):
            forms = [mol]
    return forms


def _label(element, charge):
    return element + ("+" if charge > 0 else "-" if charge < 0 else "")


def ref_neighbours(atom):
    out = []
    for bond in atom.GetBonds():
        other = bond.GetOtherAtom(atom)
        out.append((_label(other.GetSymbol(), other.GetFormalCharge()), other.GetTotalNumHs(),
                    int(round(bond.GetBondTypeAsDouble()))))
    return out


def ref_atom_key(label, h, neighbours):
    return f"{label}{h}|" + ",".join(f"{lab}{nh}-{o}" for lab, nh, o in sorted(neighbours))


def ref_mol_atom_keys(mol):
    return [ref_atom_key(_label(a.GetSymbol(), a.GetFormalCharge()), a.GetTotalNumHs(), ref_neighbours(a))
            for a in mol.GetAtoms()]


def ref_mol_rarity(table, mol):
    return min(sum(table.atom_rarity(k) for k in ref_mol_atom_keys(f)) for f in ref_kekule_forms(mol))


def ref_solve_assignment(cost):
    c = np.asarray(cost, dtype=float)
    n = c.shape[0]
    if n == 0:
        return np.zeros(0, dtype=int)
    u = np.zeros(n + 1)
    v = np.zeros(n + 1)
    p = np.zeros(n + 1, dtype=int)
    way = np.zeros(n + 1, dtype=int)
    for i in range(1, n + 1):
        p[0] = i
        j0 = 0
        minv = np.full(n + 1, np.inf)
        used = np.zeros(n + 1, dtype=bool)
        while True:
            used[j0] = True
            i0 = p[j0]
            cur = c[i0 - 1] - u[i0] - v[1:]
            free = ~used[1:]
            better = free & (cur < minv[1:])
            idx = np.nonzero(better)[0] + 1
            minv[idx] = cur[idx - 1]
            way[idx] = j0
            cand = np.where(free, minv[1:], np.inf)
            j1 = int(np.argmin(cand)) + 1
            delta = cand[j1 - 1]
            used_idx = np.nonzero(used)[0]
            u[p[used_idx]] += delta
            v[used_idx] -= delta
            minv[1:][free] -= delta
            j0 = j1
            if p[j0] == 0:
                break
        while True:
            j1 = way[j0]
            p[j0] = p[j1]
            j0 = j1
            if j0 == 0:
                break
    cols = np.zeros(n, dtype=int)
    for j in range(1, n + 1):
        cols[p[j] - 1] = j - 1
    return cols


def ref_cover_cost(rows, n_lines):
    if not rows:
        return 0.0 if n_lines == 0 else math.inf
    mat = np.vstack(rows)
    base = mat.min(axis=1)
    if not np.all(np.isfinite(base)):
        return math.inf
    if n_lines == 0:
        return float(base.sum())
    big = 1e6
    extra = np.where(np.isfinite(mat), mat - base[:, None], big)
    n_c, n_l = extra.shape
    if n_c < n_l:
        return math.inf
    square = np.zeros((n_c, n_c))
    square[:, :n_l] = extra
    cols = ref_solve_assignment(square)
    add = float(square[np.arange(n_c), cols].sum())
    return math.inf if add >= big else float(base.sum()) + add


def ref_structure_cost(rule, mol):
    best = math.inf
    for form in ref_kekule_forms(mol):
        rows = []
        total = 0.0
        for atom in form.GetAtoms():
            nbs = ref_neighbours(atom)
            label = _label(atom.GetSymbol(), atom.GetFormalCharge())
            total += rule.rarity_weight * rule.table.atom_rarity(ref_atom_key(label, atom.GetTotalNumHs(), nbs))
            if label == "C":
                vec = rule.line_costs(atom.GetTotalNumHs(), nbs)
                rows.append(vec if vec is not None else np.full(len(rule.line_hydrogens), np.inf))
        best = min(best, total + ref_cover_cost(rows, len(rule.line_hydrogens)))
    return best


def ref_carbon_environment(graph, i):
    adjacency = graph.adjacency
    hydrogens = graph.hydrogens
    n = len(hydrogens)
    code = f"{graph.token[i]}H{hydrogens[i]}"
    codes = [code]
    ctype = code + "|" + "".join(sorted({b for _, b in adjacency[i]}))
    feats = [ctype]
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
        inner = 0
        if len(found) > 1:
            for q in found:
                for r, _ in adjacency[q]:
                    if r in found:
                        inner += 1
        code = code + "/" + ",".join(sorted(found.values())) if found else code + "/"
        if inner:
            code += f"%{inner // 2}"
        if multi:
            code += f"&{multi}"
        codes.append(code)
        if k <= FEATURE_DISTANCE:
            if inner:
                feats.append(f"{ctype}|ring{2 * k + 1}")
            if multi:
                feats.append(f"{ctype}|ring{2 * k}")
            pre = f"{ctype}|{k}|"
            if k == 1:
                feats.extend(pre + lab for lab in found.values())
            elif k <= PATH_FEATURE_DISTANCE:
                for q, lab in found.items():
                    feats.append(pre + lab)
                    feats.append(pre + "*" + lab[-(len(token[q]) + 1):])
        if not found:
            for _ in range(k + 1, MAX_SPHERE + 1):
                code = code + "/"
                codes.append(code)
            break
        for q, lab in found.items():
            dist[q] = k
            label[q] = lab
        frontier = list(found)
    return codes, feats


def ref_predict(model, mol):
    """(index, H, shift, sigma, sphere) per carbon, without any cache."""
    graph = graph_from_mol(mol)
    row = model._row
    out = []
    for i, sym in enumerate(graph.symbol):
        if sym != "C":
            continue
        codes, feats = ref_carbon_environment(graph, i)
        hit = (0, float("nan"), 0, float("nan"), float("nan"))
        for s in range(MAX_SPHERE, 0, -1):
            k = row.get(code_key(codes[s]))
            if k is not None:
                j = row.get(code_key(codes[s - 1])) if s > 1 else None
                up = model._median[j] if j is not None else model._median[k]
                hit = (s, model._median[k], model._count[k], model._spread[k], up)
                break
        h = graph.hydrogens[i]
        base = model._base.get(feats[0])
        if base is None:
            fb = model._h_means.get(min(h, 3), 100.0)
        else:
            fb = base + sum(model._w.get(f, 0.0) for f in sorted(feats[1:]))
            for s in (1, 2, 3):
                k = row.get(code_key(codes[s]))
                if k is not None:
                    fb += model._code_w[k]
        shift, sig = model.combine(*hit, fb, h)
        out.append((graph.atom_index[i], h, round(shift, 2), round(sig, 2), hit[0]))
    return out


def ref_hindered_bonds(mol):
    found = {}
    for kind, pattern in rotamers._PATTERNS:
        for match in mol.GetSubstructMatches(pattern, uniquify=False):
            found.setdefault((match[0], match[1]), kind)
    return tuple(rotamers.HinderedBond(kind, n, p) for (n, p), kind in sorted(found.items()))


def ref_carbon_classes(mol):
    ranks = list(Chem.CanonicalRankAtoms(mol, breakTies=False))
    groups = {}
    for atom in mol.GetAtoms():
        if atom.GetAtomicNum() == 6:
            groups.setdefault((atom.GetTotalNumHs(), ranks[atom.GetIdx()]), []).append(atom.GetIdx())
    out = {}
    for (h, _), atoms in sorted(groups.items()):
        out.setdefault(h, []).append(atoms)
    return out


def ref_assign_flow(peaks, classes):
    """The min-cost-flow assignment as first written (numpy arrays throughout)."""
    from ortools.graph.python import min_cost_flow

    scale, force = 1000.0, 10**9
    nc, nl = len(classes), len(peaks)
    obs = np.array([pk.shift for pk in peaks], dtype=float)
    line_h = np.array([-1 if pk.hydrogens is None else pk.hydrogens for pk in peaks])
    cls_h = np.array([c.hydrogens for c in classes])
    compat = (line_h[None, :] == -1) | (line_h[None, :] == cls_h[:, None])
    cost = shift_cost_matrix(obs, [c.shift for c in classes], [c.sigma for c in classes])
    cost[~compat] = np.nan
    split_cap = np.array([min(len(c.atoms) - 1, 2) for c in classes], dtype=np.int64)
    total_split = int(split_cap.sum())
    cnode = 2 + np.arange(nc)
    lnode = 2 + nc + np.arange(nl)
    pc, pl = np.nonzero(compat)
    has_split = np.nonzero(split_cap)[0]
    more_split = np.nonzero(split_cap > 1)[0]
    first_cost = np.array([round(classes[c].split_cost * scale) for c in has_split], np.int64)
    tails = [np.zeros(nc, np.int64), np.zeros(len(has_split) + len(more_split), np.int64), cnode[pc], lnode, lnode]
    heads = [cnode, cnode[np.concatenate([has_split, more_split])], lnode[pl], np.full(nl, 1), np.full(nl, 1)]
    caps = [np.ones(nc, np.int64), np.concatenate([np.ones(len(has_split), np.int64), split_cap[more_split] - 1]),
            np.ones(len(pc), np.int64), np.ones(nl, np.int64), np.full(nl, nc, np.int64)]
    costs = [np.full(nc, -force, np.int64),
             np.concatenate([first_cost, np.full(len(more_split), round(SPLIT_COST * scale), np.int64)]),
             np.round(cost[pc, pl] * scale).astype(np.int64),
             np.full(nl, round(-UNFILLED_COST * scale), np.int64),
             np.full(nl, round(OVERLAP_COST * scale), np.int64)]
    if total_split:
        tails.append(np.array([0]))
        heads.append(np.array([1]))
        caps.append(np.array([total_split]))
        costs.append(np.array([0]))
    first_pair = nc + len(has_split) + len(more_split)
    flow = min_cost_flow.SimpleMinCostFlow()
    arcs = flow.add_arcs_with_capacity_and_unit_cost(
        np.concatenate(tails), np.concatenate(heads), np.concatenate(caps), np.concatenate(costs))
    supply = nc + total_split
    flow.set_nodes_supplies(np.array([0, 1]), np.array([supply, -supply]))
    if flow.solve() != flow.OPTIMAL:
        return (), math.inf, 0, 0, tuple(range(nl))
    flows = flow.flows(arcs)
    used = np.nonzero(flows[first_pair:first_pair + len(pc)])[0]
    per_class = {}
    for k in used:
        per_class.setdefault(int(pc[k]), []).append(int(pl[k]))
    if len(per_class) < nc:
        return (), math.inf, 0, 0, tuple(range(nl))
    by_line = {}
    for c, ls in per_class.items():
        for l in ls:
            by_line.setdefault(l, []).append(c)
    primary = {l: min(cs, key=lambda c: (cost[c, l], c)) for l, cs in by_line.items()}
    entries = []
    total = 0.0
    overlaps = splits = 0
    for c in sorted(per_class):
        ls = sorted(per_class[c], key=lambda l: (cost[c, l], l))
        for rank_in_class, l in enumerate(ls):
            kind = "primary" if primary[l] == c else "overlap"
            if rank_in_class > 0:
                kind = "split"
                splits += 1
                total += classes[c].split_cost if rank_in_class == 1 else SPLIT_COST
            elif kind == "overlap":
                overlaps += 1
                total += OVERLAP_COST
            total += cost[c, l]
            entries.append(LineEntry(l, peaks[l].shift, classes[c].shift, classes[c].sigma, classes[c].atoms, kind))
    unfilled = tuple(l for l in range(nl) if l not in by_line)
    total += UNFILLED_COST * len(unfilled)
    entries.sort(key=lambda e: (e.peak_index, e.atoms))
    return tuple(entries), total, overlaps, splits, unfilled


# --------------------------------------------------------------------------
# Fixtures


@pytest.fixture(scope="module")
def mols():
    keep_h = Chem.SmilesParserParams()
    keep_h.removeHs = False
    out = []
    for smi in MOLECULES:
        mol = Chem.MolFromSmiles(smi, keep_h) if "[H]" in smi else Chem.MolFromSmiles(smi)
        assert mol is not None, smi
        out.append(mol)
    return out


def _classes(mol, shifts, split_costs):
    out = []
    for h, groups in ref_carbon_classes(mol).items():
        for atoms in groups:
            preds = [shifts[i] for i in atoms]
            out.append(CarbonClass(h, tuple(atoms), sum(p[2] for p in preds) / len(preds), max(p[3] for p in preds),
                                   split_costs.get(atoms[0], SPLIT_COST)))
    return out


def _peaks(mol, k, counted=False):
    """Invented lines near the reference predictions (seeded), with overlaps,
    extra lines and unknown multiplicities."""
    model = load_search_model()
    shifts = {p[0]: p for p in ref_predict(model, mol)}
    rng = random.Random(1000 + k)
    lines = []
    for h, groups in ref_carbon_classes(mol).items():
        for atoms in groups:
            x = sum(shifts[i][2] for i in atoms) / len(atoms) + rng.uniform(-3.0, 3.0)
            lines.append([round(x, 1), h, len(atoms)])
    if not lines:
        return ()
    if counted:
        return tuple(Peak(x, h, c) for x, h, c in sorted(lines))
    if k % 3 == 0 and len(lines) > 2:  # two classes under one line
        lines.pop(rng.randrange(len(lines)))
    if k % 4 == 0:  # a line more than classes
        lines.append([round(rng.uniform(10.0, 200.0), 1), rng.randrange(4), 1])
    if k % 5 == 0:
        for line in lines[::2]:
            line[1] = None
    seen = set()
    out = []
    for x, h, _ in sorted(lines, key=lambda t: t[0]):
        while x in seen:
            x = round(x + 0.1, 1)
        seen.add(x)
        out.append(Peak(x, h, None))
    return tuple(out)


# --------------------------------------------------------------------------
# Checks


def test_sphere_codes_and_path_features_equal_the_reference(mols):
    for mol in mols:
        graph = graph_from_mol(mol)
        steps = _shell_steps(graph)
        for i in range(len(graph.symbol)):
            shells = []
            codes = sphere_codes(graph, i, steps, shells)
            ref_codes, ref_feats = ref_carbon_environment(graph, i)
            assert codes == ref_codes
            assert path_features(graph, i, shells) == ref_feats
            assert carbon_environment(graph, i) == (ref_codes, ref_feats)


def test_predictions_equal_the_reference_with_cold_and_warm_cache(mols):
    model = load_search_model()  # the table, which the reference re-implements
    model._cache.clear()
    for _ in range(2):  # first pass fills the cache, the second reads it
        for mol in mols:
            got = [(a.index, a.hydrogens, a.shift, a.sigma, a.sphere) for a in predict_mol(mol, model)]
            assert got == ref_predict(model, mol)


def test_kekule_forms_equal_the_reference(mols):
    for mol in mols:
        got = [Chem.MolToSmiles(f, kekuleSmiles=True) for f in kekule_forms(mol)]
        ref = [Chem.MolToSmiles(f, kekuleSmiles=True) for f in ref_kekule_forms(mol)]
        assert got == ref
        for limit in (1, 3):
            got = [Chem.MolToSmiles(f, kekuleSmiles=True) for f in kekule_forms(mol, limit)]
            assert got == [Chem.MolToSmiles(f, kekuleSmiles=True) for f in ref_kekule_forms(mol, limit)]
    # the limit matters: six separate benzene rings have 2**6 Kekulé structures
    assert len(kekule_forms(Chem.MolFromSmiles(HEXAPHENYLETHANE))) == 32


@pytest.mark.skipif(load_environment_table() is None, reason="environment table not shipped")
def test_prior_and_approximate_cost_equal_the_reference(mols):
    table = load_environment_table()
    for k, mol in enumerate(mols):
        peaks = _peaks(mol, k)
        if not peaks:
            continue
        rule = EnvironmentRule(peaks, table)
        rule.rarity_weight = 1.0 if k % 2 else 0.7
        fresh = Chem.Mol(mol)
        assert table.mol_rarity(fresh) == ref_mol_rarity(table, fresh)
        assert rule.structure_cost(fresh) == ref_structure_cost(rule, fresh)
        assert rule.structure_cost(fresh) == ref_structure_cost(rule, fresh)  # cached rows, same value


@pytest.mark.skipif(load_environment_table() is None, reason="environment table not shipped")
def test_edited_molecule_never_reuses_stale_forms():
    table = load_environment_table()
    mol = Chem.RWMol(Chem.MolFromSmiles("Oc1ccccc1CC=C"))
    before = table.mol_rarity(mol)
    assert before == ref_mol_rarity(table, mol)
    # move the double bond along the side chain, in place
    mol.GetBondBetweenAtoms(8, 9).SetBondType(Chem.BondType.SINGLE)
    mol.GetBondBetweenAtoms(7, 8).SetBondType(Chem.BondType.DOUBLE)
    Chem.SanitizeMol(mol)
    assert table.mol_rarity(mol) == ref_mol_rarity(table, mol)
    assert table.mol_rarity(mol) != before


def test_rank_structure_equals_the_reference(mols, monkeypatch):
    from elucidate.rank import assignment

    model = load_search_model()
    for k, mol in enumerate(mols):
        assert rotamers.hindered_bonds(mol) == ref_hindered_bonds(mol)
        assert carbon_classes(mol) == ref_carbon_classes(mol)
        classes = _classes(mol, {p[0]: p for p in ref_predict(model, mol)}, rotamers.rotamer_split_costs(mol))
        for counted in (False, True):
            peaks = _peaks(mol, k, counted)
            if not peaks:
                continue
            got, predicted = rank_structure(mol, peaks)
            assert predicted == tuple((i, h, s, g) for i, h, s, g, _ in ref_predict(model, mol))
            if counted:  # carbon-level matching: its code is unchanged but for the Hungarian scan
                with monkeypatch.context() as m:
                    m.setattr(assignment, "solve_assignment", ref_solve_assignment)
                    want = assignment._assign_counted(peaks, classes)
                assert want is not None
                assert got == want and repr(got.cost) == repr(want.cost)
                continue
            entries, cost, overlaps, splits, unfilled = ref_assign_flow(peaks, classes)
            assert got.entries == entries
            assert repr(got.cost) == repr(cost) and type(got.cost) is type(cost)
            assert (got.overlaps, got.splits, got.unfilled) == (overlaps, splits, unfilled)


def _random_square(rng, n):
    kind = rng.randrange(3)
    if kind == 0:  # small integers: many ties
        return [[float(rng.randrange(4)) for _ in range(n)] for _ in range(n)]
    if kind == 1:  # zeros, a "forbidden" value and fractions
        return [[rng.choice([0.0, 0.0, 1e6, rng.random(), round(rng.uniform(0, 5), 1)]) for _ in range(n)]
                for _ in range(n)]
    return [[rng.uniform(0.0, 100.0) for _ in range(n)] for _ in range(n)]


def test_hungarian_scan_in_lists_equals_the_numpy_scan():
    rng = random.Random(7)
    for _ in range(600):
        n = rng.randint(1, 18)
        m = _random_square(rng, n)
        ref = ref_solve_assignment(np.array(m)).tolist()
        assert solve_assignment_lists(m) == ref
        assert solve_assignment(np.array(m)).tolist() == ref
    big = _random_square(rng, 160)  # above the plain-Python size: numpy scan
    assert solve_assignment(np.array(big)).tolist() == ref_solve_assignment(np.array(big)).tolist()


def _random_rows(rng, n_c, n_l, finite=False):
    rows = []
    for _ in range(n_c):
        if finite:  # carbons that mostly prefer the first line, so covering the others costs extra
            row = [rng.choice([0.5, 1.0, float(rng.randrange(1, 4)), rng.uniform(0.2, 8)]) for _ in range(n_l)]
            if rng.random() < 0.7:
                row[0] = 0.0
        else:
            row = [rng.choice([math.inf, 0.0, float(rng.randrange(3)), rng.uniform(0, 8)]) for _ in range(n_l)]
            if rng.random() < 0.8 and all(x == math.inf for x in row):
                row[rng.randrange(n_l)] = 0.5
        rows.append(row)
    return rows


def test_cover_costs_equal_the_reference():
    rng = random.Random(11)
    for _ in range(500):
        n_l = rng.randint(1, 9)
        rows = _random_rows(rng, rng.randint(max(1, n_l - 2), n_l + 6), n_l)
        arrays = [np.array(r) for r in rows]
        ref = ref_cover_cost(arrays, n_l)
        assert cover_cost(arrays, n_l) == ref
        assert cover_cost_lists(rows, n_l) == ref
    assert cover_cost([], 0) == ref_cover_cost([], 0) == 0.0
    assert cover_cost_lists([], 2) == math.inf


def test_smallest_cover_over_forms_equals_the_reference():
    # several Kekulé forms of one structure: close offsets and similar rows, so
    # that a scan skipped on a wrong bound would change the minimum
    rng = random.Random(12)
    for _ in range(400):
        n_l = rng.randint(1, 8)
        n_c = rng.randint(n_l, n_l + 5)
        shared = _random_rows(rng, n_c, n_l, finite=True)
        problems = []
        for _ in range(rng.randint(2, 5)):
            rows = [r if rng.random() < 0.6 else _random_rows(rng, 1, n_l, finite=True)[0] for r in shared]
            problems.append((rng.choice([0.0, 0.5, rng.uniform(0.0, 2.0)]), rows))
        if rng.random() < 0.2:
            problems.append((0.0, _random_rows(rng, n_c, n_l)))
        want = min(off + ref_cover_cost([np.array(r) for r in rows], n_l) for off, rows in problems)
        got = min_offset_cover([(off, [CoverRow(r) for r in rows]) for off, rows in problems], n_l)
        assert got == want
    assert min_offset_cover([], 3) == math.inf


def test_environment_keys_of_forms_equal_the_reference(mols):
    for mol in mols:
        env._FORMS_CACHE.clear()
        forms = env._mol_forms(mol)
        ref = ref_kekule_forms(mol)
        assert len(forms) == len(ref)
        for f, r in zip(forms, ref):
            assert list(f.atom_keys) == ref_mol_atom_keys(r)
            want = [(a.GetTotalNumHs(), environment_keys(a.GetTotalNumHs(), ref_neighbours(a)))
                    for a in r.GetAtoms() if _label(a.GetSymbol(), a.GetFormalCharge()) == "C"]
            assert list(f.carbon_keys) == want
