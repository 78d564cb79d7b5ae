"""Colour-vision tasks of our own design, performed by model observers (see docs/tasks.md).

Modules: :mod:`.moments` (Vingrys & King-Smith 1988 scoring, crossings),
:mod:`.arrangement` (our caps, the model arranger, CIELUV), :mod:`.plates`
(figure-ground dot plates, legibility), :mod:`.rayleigh` (the Rayleigh match),
:mod:`.core` (:func:`tasks` and :class:`TaskResult`), :mod:`.stimuli` (export).
The public entry point is ``cvdfilter.tasks``.
"""

from __future__ import annotations

from .core import TASKS, ObserverMembers, TaskResult, tasks

__all__ = ["tasks", "TaskResult", "ObserverMembers", "TASKS"]
