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


# The public API.  Imported eagerly: a lazy attribute named like its own
# submodule would be replaced by the module on first import.
from .check import check  # noqa: E402
from .errors import PlanError, ZsplanError  # noqa: E402
from .loader import load_plan  # noqa: E402

__all__ = ["check", "load_plan", "PlanError", "ZsplanError", "CAUTION", "__version__"]
