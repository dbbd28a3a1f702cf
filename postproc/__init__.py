"""shearpost: shear reinforcement of reinforced-concrete frame members to ACI 318-19.

Importing the package is cheap and changes no process-wide setting; the Python API
(``postproc.design``, ``postproc.open_store``, see postproc/api.py) loads on first use::

    import postproc
    result = postproc.design("members.csv", "forces.csv", cases="cases.csv")
    result.members  # the columns of members.csv
"""

import importlib

__version__ = "0.1.0"  # the one version source: pyproject.toml reads it (dynamic version)

__all__ = ["design", "open_store", "Design", "__version__"]


def __getattr__(name: str):
    """The rest of the API on first use, so that `import postproc` (and `shearpost --version`) stay fast."""
    if name in ("design", "open_store", "Design"):
        return getattr(importlib.import_module("postproc.api"), name)
    raise AttributeError(f"module 'postproc' has no attribute {name!r}")
