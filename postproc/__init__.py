"""shearpost: shear reinforcement of reinforced-concrete frame members to ACI 318-19.

Importing the package is cheap and changes no process-wide setting; the Python API
(``postproc.design``, ``postproc.open_store``, see postproc/api.py) loads on first use::

    import postproc
    result = postproc.design("members.csv", "forces.csv", cases="cases.csv")
    result.members  # the columns of members.csv
"""

import importlib
import sys
import types

__version__ = "0.1.0"  # the one version source: pyproject.toml reads it (dynamic version)

__all__ = ["design", "open_store", "Design", "__version__"]


class _DesignStage(types.ModuleType):
    """The design stage (postproc/design.py) shares its name with the API's ``design()``:
    the module stays a module for the stages that import it, and calling it runs the API."""

    def __call__(self, members, forces, cases=None, config=None, **options):
        from postproc.api import design

        return design(members, forces, cases, config, **options)


class _Package(types.ModuleType):
    @property
    def design(self):
        stage = importlib.import_module("postproc.design")
        stage.__class__ = _DesignStage
        return stage

    @design.setter
    def design(self, module) -> None:
        """The import system records the submodule here; the getter finds it in sys.modules."""


sys.modules[__name__].__class__ = _Package


def __getattr__(name: str):
    """The rest of the API on first use, so that `import postproc` (and `shearpost --version`) stay fast."""
    if name in ("open_store", "Design"):
        return getattr(importlib.import_module("postproc.api"), name)
    raise AttributeError(f"module 'postproc' has no attribute {name!r}")
