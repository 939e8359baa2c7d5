"""Version 0.1 module names, kept working for notebooks written against them.

Version 0.1 was a flat package (``toolkit.paths``, ``toolkit.solve``,
``toolkit.study``, ...); 0.2 sorts the same code into layers.  A workbook
copied with ``new`` under 0.1 imports the old names, so each old name stays
importable as an alias of its new home, with a ``FutureWarning`` that names
the new import.  The aliases are the modules themselves (``toolkit.study is
toolkit.report.steps``), so nothing is copied and no state is doubled.
"""
from __future__ import annotations

import importlib
import importlib.abc
import importlib.util
import sys
import warnings

__all__ = ["OLD_NAMES", "install"]

#: Old module name -> where its public names live now.
OLD_NAMES = {
    "toolkit.elements": "toolkit.core.elements",
    "toolkit.mesh": "toolkit.core.mesh",
    "toolkit.fields": "toolkit.core.fields",
    "toolkit.stress": "toolkit.core.stress",
    "toolkit.spr": "toolkit.recovery.spr",
    "toolkit.solve": "toolkit.fem",
    "toolkit.models": "toolkit.fem.models",
    "toolkit.paths": "toolkit.assess",
    "toolkit.hotspot": "toolkit.assess.hotspot",
    "toolkit.indicator": "toolkit.assess.indicator",
    "toolkit.quality": "toolkit.assess.convergence",
    "toolkit.checks": "toolkit.assess.checks",
    "toolkit.references": "toolkit.assess.references",
    "toolkit.plots": "toolkit.report.plots",
    "toolkit.widgets": "toolkit.report.widgets",
    "toolkit.study": "toolkit.report.steps",
    "toolkit.demo": "toolkit.workbook.recovery_demo",
}


class _AliasLoader(importlib.abc.Loader):
    def __init__(self, target: str):
        self.target = target

    def create_module(self, spec):
        module = importlib.import_module(self.target)
        self.spec = module.__spec__        # the import system sets the alias's spec on it next
        return module

    def exec_module(self, module):
        module.__spec__ = self.spec        # already executed; keep its own spec (and name)


class _OldNames(importlib.abc.MetaPathFinder):
    def find_spec(self, fullname, path=None, target=None):
        new = OLD_NAMES.get(fullname)
        if new is None:
            return None
        warnings.warn(f"{fullname} is now {new} (Stresspath 0.2 layers); import from there, or from toolkit",
                      FutureWarning, stacklevel=2)
        return importlib.util.spec_from_loader(fullname, _AliasLoader(new))


def install() -> None:
    """Put the old names on the import path (once)."""
    if not any(isinstance(f, _OldNames) for f in sys.meta_path):
        sys.meta_path.insert(0, _OldNames())      # before the path finders: a stale old folder must not win
