"""zsplan: take cable lengths off a floor plan and check every final circuit's
earth-fault loop impedance, disconnection time, voltage drop and protective
conductor against BS 7671 / IEC 60364.

zsplan is a design aid: its results rest on the inputs and the method. Verify
by inspection and testing; local wiring regulations and a qualified
electrician govern.
"""
__version__ = "0.1.0"

CAUTION = (
    "Design aid only: results rest on the inputs and the method. Verify by "
    "inspection and testing; local wiring regulations and a qualified "
    "electrician govern."
)


import sys as _sys
import types as _types


class _CallableModule(_types.ModuleType):
    """The submodule ``zsplan.check``, callable as the function of its name.

    Importing a submodule sets it as an attribute of the package, so once
    anything has imported ``zsplan.check`` (the command line does), the name
    ``zsplan.check`` is the module, not the function.  Calling the module
    calls its function, so ``zsplan.check(path)`` works either way.
    """

    def __call__(self, *args, **kwargs):
        return getattr(self, self.__name__.rpartition(".")[2])(*args, **kwargs)


class _Package(_types.ModuleType):
    def __setattr__(self, name, value):
        if (name == "check" and isinstance(value, _types.ModuleType)
                and value.__name__ == f"{__name__}.{name}"):
            value.__class__ = _CallableModule
        super().__setattr__(name, value)


_sys.modules[__name__].__class__ = _Package


# The public API.  Imported eagerly: a lazy attribute named like its own
# submodule would be replaced by the module on first import.
from .check import check  # noqa: E402
from .errors import PlanError, ZsplanError  # noqa: E402
from .loader import load_plan  # noqa: E402

__all__ = ["check", "load_plan", "PlanError", "ZsplanError", "CAUTION", "__version__"]
