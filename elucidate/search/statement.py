"""What a search can honestly say about its result, in words a chemist can act on.

Three pieces, made once here and printed unchanged by every report:

* **how** -- one sentence on what was searched and how (which strategies
  ran, how many structures they examined, why the search ended);
* **completeness** -- what is proven about the structures not listed: the
  whole constrained space was searched; every structure up to an
  approximate cost was examined (said as an equivalent shift misfit); the
  best structures were found by sampling, which proves nothing about the
  rest; or the time limit came first;
* **assumptions** -- every default or chosen constraint that completeness
  holds under (symmetry allowance, plausibility filters, valences, the
  shift-environment rule, the user's substructure options).

The approximate cost is a sum of Student-t excesses (3 degrees of freedom)
of carbons against their first-sphere environment's shift distribution
plus rarity terms (:mod:`elucidate.constraints.environments`); an excess
``c`` corresponds to a carbon ``z = sqrt(3 (exp(c / 2) - 1))`` spreads away
from its environment's median.  With a typical spread of
:data:`TYPICAL_SPREAD_PPM` this turns a cost bound into ppm: all of it on
one carbon, or shared evenly by all carbons.
"""

from __future__ import annotations

import math
from typing import Sequence

__all__ = ["assumptions", "fit_equivalent", "completeness_sentence", "how_sentence", "empty_result_warning",
           "TYPICAL_SPREAD_PPM"]

#: Typical spread (ppm) of a first-sphere environment's shifts: the
#: interquartile range / 1.349 of the well-populated environments of the
#: shipped table is 1.5-3 ppm (floored at 1.5 in the cost); 2 ppm is used
#: to turn costs into words (common practice of this project, no source).
TYPICAL_SPREAD_PPM = 2.0
_NU = 3.0


def _excess_to_ppm(cost: float) -> float:
    """ppm away from the environment median that a Student-t excess ``cost`` means."""
    cost = max(0.0, cost)
    return TYPICAL_SPREAD_PPM * math.sqrt(_NU * math.expm1(cost / (0.5 * (_NU + 1.0))))


def fit_equivalent(cost_bound: float, carbons: int) -> tuple[float, float]:
    """(one carbon off by ... ppm, every carbon off by ... ppm) equivalent to a cost.

    >>> one, each = fit_equivalent(7.0, 10)
    >>> round(one), round(each, 1)
    (20, 2.2)
    """
    carbons = max(1, carbons)
    return _excess_to_ppm(cost_bound), _excess_to_ppm(cost_bound / carbons)


def assumptions(*, overlap: int, split: int, allow_all: bool, filter_names: Sequence[str],
                valences: dict, charged_nitrogen: bool, environment_margin: float | None,
                require: Sequence[str] = (), forbid: Sequence[str] = (), scaffold: str | None = None,
                max_rings: int | None = None, min_ring_size: int | None = None,
                max_ring_size: int | None = None, multiplicities: bool = True) -> list[str]:
    """Every assumption that limits what the search covers, in plain words."""
    out = [f"at most {overlap} accidental overlap(s) of inequivalent carbons and {split} split line(s) "
           f"of equivalent ones (--max-overlap, --max-split)"]
    if allow_all:
        out.append("no plausibility filter (--allow-all)")
    else:
        names = ", ".join(n.removeprefix("no ") for n in filter_names) or "none"
        out.append(f"implausible motifs left out: {names} (--allow-all keeps them)")
    wide = [f"{el} {'/'.join(map(str, v))}" for el, v in sorted(valences.items()) if len(v) > 1]
    out.append("valences: lowest for every element" + (f", and {', '.join(wide)}" if wide else "")
               + ("; charge-separated N+/O- groups allowed" if charged_nitrogen
                  else "; no charge-separated groups (--charged-nitrogen)"))
    if environment_margin is not None:
        out.append(f"every carbon's first-neighbour environment within {environment_margin:g} ppm of the shifts "
                   "seen for that environment in the reference data (environments seen fewer than 20 times "
                   "are always allowed)")
    if multiplicities:
        out.append("the DEPT multiplicities as given")
    for s in require:
        out.append(f"contains {s} (--require)")
    for s in forbid:
        out.append(f"does not contain {s} (--forbid)")
    if scaffold:
        out.append(f"contains the scaffold {scaffold} (--scaffold)")
    if max_rings is not None:
        out.append(f"at most {max_rings} ring(s)")
    if min_ring_size is not None or max_ring_size is not None:
        out.append(f"ring sizes {min_ring_size or 3}..{max_ring_size if max_ring_size is not None else 'any'}")
    return out


def completeness_sentence(status: str, cost_bound: float | None, carbons: int, time_limit: float) -> str:
    """What is proven about the structures not listed."""
    if status == "complete":
        return ("The search was exhaustive under the stated constraints: every constitution allowed by the "
                "assumptions below was generated "
                "and scored.")
    if status == "complete up to cost" and cost_bound is not None:
        one, each = fit_equivalent(cost_bound, carbons)
        return (f"Every structure whose quick first-neighbour misfit is below {cost_bound:.2f} was scored "
                f"(as much misfit as one carbon {one:.0f} ppm from the usual shift of its environment, or every "
                f"carbon about {each:.1f} ppm off); structures beyond that were not all examined.")
    if status == "sampled":
        extra = ""
        if cost_bound is not None:
            one, each = fit_equivalent(cost_bound, carbons)
            extra = (f" Structures with a quick first-neighbour misfit below {cost_bound:.2f} (one carbon "
                     f"{one:.0f} ppm, or every carbon {each:.1f} ppm off) were all scored.")
        return ("The best structures were found by sampling (annealing from the best structures found so far); "
                "sampling proves nothing about the structures it did not visit, so a better-fitting structure "
                "may exist." + extra)
    return (f"The search was cut short by the time limit ({time_limit:g} s) before it could prove anything "
            "about the structures not listed.")


def how_sentence(strategies: Sequence, ended: str, time_limit: float) -> str:
    """One sentence: which strategies ran, on how many structures, and why the search ended."""
    parts = []
    for s in strategies:
        if s.structures <= 0 and s.seconds < 0.05:
            continue
        parts.append(f"{s.name} ({s.structures:,} structures)")
    why = {"finished": "it finished", "time limit": f"the time limit ({time_limit:g} s) was reached",
           "confident": "the calibrated chance of finding a better structure fell below 1 %"}.get(ended, ended)
    if not parts:
        return f"Searched: nothing; the search ended because {why}."
    return "Searched: " + "; ".join(parts) + f". The search ended because {why}."


def empty_result_warning(status: str, time_limit: float) -> str:
    """Why the list is empty, without blaming the data for a search that ran out of time."""
    if status == "complete":
        return ("no structure satisfies the constraints: the search was exhaustive under the assumptions listed; "
                "check the formula and the multiplicities, drop solvent or impurity lines, or relax an "
                "assumption (--max-overlap, --max-split, --allow-all)")
    return (f"no structure was found before the time limit ({time_limit:g} s): the search did not finish, so this "
            "does not mean that none fits; raise --time-limit or narrow the search (--require, --scaffold)")
