"""Laboratory workflows built on the elucidation pipeline.

* :mod:`.check` — verify that a spectrum fits an expected structure and
  look among its isomers for structures that fit clearly better;
* :mod:`.regio` — positional isomers of a structure (substituents moved);
* :mod:`.scaffold` — keep only structures containing a given scaffold
  (``solve --scaffold``, the byproduct hunt);
* :mod:`.batch` — run many samples from a CSV file in parallel processes
  or on a Dask distributed cluster.

Submodules are imported on use, so that ``elucidate.pipeline`` can import
:mod:`.scaffold` without a cycle.  Results are hypotheses.
"""

__all__ = ["check", "regio", "scaffold", "batch"]
