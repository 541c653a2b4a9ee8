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


def __getattr__(name):
    # the public API, imported on first use so that `import zsplan` stays light
    if name == "check":
        from .check import check
        return check
    if name == "load_plan":
        from .loader import load_plan
        return load_plan
    if name in ("PlanError", "ZsplanError"):
        from . import errors
        return getattr(errors, name)
    raise AttributeError(f"module 'zsplan' has no attribute {name!r}")


__all__ = ["check", "load_plan", "PlanError", "ZsplanError", "CAUTION", "__version__"]
