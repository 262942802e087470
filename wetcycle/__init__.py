"""wetcycle: salts and brines at the surface of present-day Mars and cold, dry analog sites.

Top-level helpers are imported lazily so that ``import wetcycle`` stays light
and compiles nothing.
"""

__version__ = "0.2.0"

__all__ = ["run", "run_series", "run_dataset", "open_result", "__version__"]


def __getattr__(name):
    if name == "run_series":
        from .series import run_series
        return run_series
    if name == "run_dataset":
        from .dataset import run_dataset
        return run_dataset
    if name == "run":
        from .runner import run
        return run
    if name == "open_result":
        from .output import open_result
        return open_result
    raise AttributeError(f"module 'wetcycle' has no attribute {name!r}")
