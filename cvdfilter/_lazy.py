"""Lazy exports for the subpackages: public names imported from their submodule on first use, so that
``cvdfilter --help`` does not import numpy-heavy modules it does not need.

Public: :func:`lazy_exports`.
"""

from __future__ import annotations

import importlib
import sys
from typing import Any, Callable


def lazy_exports(package: str, table: dict[str, str]) -> tuple[Callable[[str], Any], Callable[[], list[str]]]:
    """``(__getattr__, __dir__)`` for ``package`` whose public names live in the submodules ``table`` names
    (``{name: ".submodule"}``); a name, once imported, is kept in the package's namespace.

    >>> getattr_, dir_ = lazy_exports("cvdfilter.io", {"write_text": ".atomic"})
    >>> getattr_("write_text").__name__
    'write_text'
    """

    def __getattr__(name: str) -> Any:
        module = table.get(name)
        if module is None:
            raise AttributeError(f"module {package!r} has no attribute {name!r}")
        value = getattr(importlib.import_module(module, package), name)
        setattr(sys.modules[package], name, value)
        return value

    def __dir__() -> list[str]:
        return sorted(set(vars(sys.modules[package])) | set(table))

    return __getattr__, __dir__
