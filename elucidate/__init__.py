"""elucidate: propose organic structures from a molecular formula and a 13C peak list.

Python entry points (the same objects the command line serialises)::

    import elucidate
    result = elucidate.solve("C4H8O2", "171.1 C, 60.4 CH2, 21.0 CH3, 14.2 CH3")
    report = elucidate.check("CCOC(C)=O", "171.1 C, 60.4 CH2, 21.0 CH3, 14.2 CH3")
    shifts = elucidate.predict("CCOC(C)=O")
    data = elucidate.to_dict(report)

``elucidate.predict`` is also the prediction subpackage; calling it runs
:func:`elucidate.api.predict`.  Entry points are imported on first use, so
``import elucidate`` stays light.

Results are hypotheses: confirm them with reference standards and orthogonal
methods; forensic and QC decisions follow the lab's accredited procedures.
"""

import importlib as _importlib
import sys as _sys
import types as _types

from .errors import InputError

__version__ = "0.1.0"
__all__ = ["solve", "check", "predict", "to_dict", "InputError", "__version__"]


class _CallablePredictPackage(_types.ModuleType):
    """The ``elucidate.predict`` subpackage, callable as ``elucidate.predict(smiles)``."""

    def __call__(self, smiles):
        from .api import predict

        return predict(smiles)


class _Package(_types.ModuleType):
    # Importing the subpackage binds it as ``elucidate.predict``; make it callable.
    def __setattr__(self, name, value):
        if name == "predict" and isinstance(value, _types.ModuleType):
            if not isinstance(value, _CallablePredictPackage):
                value.__class__ = _CallablePredictPackage
        super().__setattr__(name, value)


_sys.modules[__name__].__class__ = _Package
if "elucidate.predict" in _sys.modules:  # pragma: no cover - reload
    predict = _sys.modules["elucidate.predict"]


def __getattr__(name):
    if name == "predict":
        return _importlib.import_module(".predict", __name__)
    if name in ("solve", "check", "to_dict"):
        from . import api

        return getattr(api, name)
    raise AttributeError(f"module 'elucidate' has no attribute {name!r}")
