"""elucidate: propose organic structures from a molecular formula and a 13C peak list.

Results are hypotheses: confirm them with reference standards and orthogonal
methods; forensic and QC decisions follow the lab's accredited procedures.
"""

__version__ = "0.1.0"
