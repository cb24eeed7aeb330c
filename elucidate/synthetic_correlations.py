"""Synthetic 2D correlation tables made from a known structure (bench only).

The bench cases carry a 13C peak list and the answer, but no 2D data.  To
measure what HSQC/HMBC/COSY evidence is worth, ``elucidate bench
--correlations synthetic`` makes a table from the answer, as a lab's 2D
spectra would roughly give it.  **These are synthetic data, not measured
ones**; real tables have overlapping 1H shifts, missing and extra peaks of
other kinds.

Recipe (fixed seed per case, so a bench run is reproducible):

1. Carbons to lines: the answer's own optimal line assignment under the
   shipped predictor (:func:`elucidate.rank.scoring.rank_structure`): the
   bench spectra have no atom-level assignment.
2. 1H shifts: distinct placeholders, one per protonated line: 1.00, 1.10,
   1.20 ... ppm in line order (no estimate of real 1H shifts; two lines
   never share a proton shift, which makes the linking easier than in
   practice).
3. HSQC: one row per protonated line.
4. HMBC: every (protonated line, line) pair whose shortest path from a
   proton on a carbon of the first to a different carbon of the second is
   2 or 3 bonds; a seeded 25 % of them dropped (weak or missing peaks);
   extras at exactly 4 bonds added, as many as 5 % of the kept rows
   (rounded half up), seeded.
5. COSY (``synthetic+cosy`` only): every pair of different protonated lines
   with bonded carbons (vicinal protons).
"""

from __future__ import annotations

import random
import zlib

from rdkit import Chem

from .spectrum.correlations import CorrelationTable, CrossPeak

__all__ = ["synthetic_correlations", "PLACEHOLDER_START", "PLACEHOLDER_STEP", "HMBC_DROP", "HMBC_EXTRA"]

PLACEHOLDER_START = 1.0
PLACEHOLDER_STEP = 0.1
#: Share of the 2-3-bond HMBC rows dropped.
HMBC_DROP = 0.25
#: 4-bond HMBC rows added, as a share of the kept rows.
HMBC_EXTRA = 0.05


def synthetic_correlations(mol: Chem.Mol, peaks, *, seed: str | int = 0, cosy: bool = False) -> CorrelationTable | None:
    """A synthetic HSQC + HMBC (+ COSY) table for structure ``mol`` and its lines.

    Returns None when the structure's carbons cannot be placed under the
    lines (then there is nothing to derive the table from).
    """
    from .rank.scoring import rank_structure

    peaks = tuple(peaks)
    assignment, _pred = rank_structure(mol, peaks)
    if not assignment.entries:
        return None
    hs = [a.GetTotalNumHs() for a in mol.GetAtoms()]
    on_line: dict[int, list[int]] = {}
    for e in assignment.entries:
        on_line.setdefault(e.peak_index, []).extend(e.atoms)
    protonated = [i for i in sorted(on_line) if any(hs[a] > 0 for a in on_line[i])]
    h_shift = {i: round(PLACEHOLDER_START + PLACEHOLDER_STEP * k, 2) for k, i in enumerate(protonated)}
    dist = Chem.GetDistanceMatrix(mol)
    rows: list[CrossPeak] = [CrossPeak("HSQC", h_shift[i], peaks[i].shift) for i in protonated]
    near, far = [], []
    for i in protonated:
        carriers = [a for a in on_line[i] if hs[a] > 0]
        for j in sorted(on_line):
            d = min((dist[x, y] for x in carriers for y in on_line[j] if x != y), default=None)
            if d is None or d > 1e6:
                continue
            bonds = int(d) + 1
            if bonds in (2, 3):
                near.append((i, j))
            elif bonds == 4:
                far.append((i, j))
    rng = random.Random(zlib.crc32(str(seed).encode()))
    kept = [pair for pair in near if rng.random() >= HMBC_DROP]
    extra = int(HMBC_EXTRA * len(kept) + 0.5)
    if far and extra:
        kept += rng.sample(far, min(extra, len(far)))
    rows += [CrossPeak("HMBC", h_shift[i], peaks[j].shift) for i, j in kept]
    if cosy:
        for k, i in enumerate(protonated):
            for j in protonated[k + 1:]:
                if any(dist[x, y] == 1 for x in on_line[i] if hs[x] > 0 for y in on_line[j] if hs[y] > 0):
                    rows.append(CrossPeak("COSY", h_shift[i], h_shift[j]))
    return CorrelationTable(tuple(rows), source="synthetic")
