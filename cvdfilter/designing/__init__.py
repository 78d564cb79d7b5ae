"""Filter design: the best filters of a family for an observer, under the requirements a lens must meet.

Modules: :mod:`~cvdfilter.designing.spaces` (families and their parameters -> spec strings and curves),
:mod:`~cvdfilter.designing.objectives` (metrics and requirement expressions),
:mod:`~cvdfilter.designing.reading` (where the scorecard's numbers are read),
:mod:`~cvdfilter.designing.engine` (the search and the selection of designs) and
:mod:`~cvdfilter.designing.study` (:func:`design` and its result with the output files).
The package is ``designing`` because the public function is ``cvdfilter.design`` (a public name may not
equal a submodule's name; DEVELOPERS.md).

Public: :func:`design`, :class:`DesignResult`.
"""

from __future__ import annotations

from .study import DesignResult, design

__all__ = ["design", "DesignResult"]
