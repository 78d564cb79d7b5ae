"""Resumable design: the archive of scored candidates kept on disk while the search runs.

The checkpoint (``DIR/design-checkpoint.npz``, written atomically at the end of a search and at most every
:data:`SAVE_INTERVAL_S` seconds during it) holds every candidate scored (parameters, objective values,
requirement violations), the evaluations counted, why the search stopped, and the signature of the run
(observers, objectives, requirements, family, seed, scorer settings, task trials, library versions).

Resuming does not restore the optimiser's internal state (scipy's differential evolution exports none):
the optimiser is run again from the same seed and every candidate the checkpoint holds is answered from it
instead of being scored. With the same inputs the optimiser asks for the same candidates in the same
order, so a resumed run gives the same designs as an uninterrupted one (tests/test_design.py checks it),
and costs the optimiser's own bookkeeping plus the candidates not yet scored. A different budget is
allowed (the population sizes follow the budget, so fewer candidates are then found in the checkpoint;
the count reused is recorded); any other difference is refused.

Public: :class:`Checkpoint`, :data:`CHECKPOINT_NAME`, :data:`SAVE_INTERVAL_S`.
"""

from __future__ import annotations

import hashlib
import io
import json
import pathlib
import time

import numpy as np

from ..errors import InputError

__all__ = ["Checkpoint", "CHECKPOINT_NAME", "SAVE_INTERVAL_S", "signature"]

#: The checkpoint's file name in the output folder.
CHECKPOINT_NAME = "design-checkpoint.npz"
#: Most seconds between two saves during a search.
SAVE_INTERVAL_S = 10.0


def signature(problem, seed: int) -> dict:
    """What must be equal for a checkpoint to be resumed (everything that changes a candidate's scores or
    the optimiser's path, except the budget)."""
    import pymoo
    import scipy

    from .._version import __version__

    return {"observers": list(problem.observers),
            "objectives": [[m.text, s] for m, s in problem.objectives],
            "requirements": [r.text for r in problem.requirements],
            "family": problem.space.describe(), "seed": int(seed),
            "score": {k: str(v) for k, v in sorted(problem.score_kwargs.items())}, "groups": list(problem.groups),
            "task_trials": int(problem.task_trials), "task_seed": int(problem.task_seed),
            "versions": {"cvdfilter": __version__, "numpy": np.__version__, "scipy": scipy.__version__,
                         "pymoo": pymoo.__version__}}


class Checkpoint:
    """The checkpoint file of one search: read on resume, written as the search goes."""

    def __init__(self, path, problem, seed: int, *, resume: bool = False) -> None:
        self.path = pathlib.Path(path)
        self.signature = signature(problem, seed)
        self.known: dict = {}
        self.reused = 0
        self.resumed: dict | None = None
        self.last_save = time.perf_counter()
        # what this run creates, removed again by discard() when the design fails (no partial output)
        self.existed = self.path.exists()
        self.new_folders = [d for d in (self.path.parent, *self.path.parent.parents) if not d.exists()]
        if resume:
            self._read()

    def _read(self) -> None:
        if not self.path.is_file():
            raise InputError(f"{self.path}: no checkpoint to resume from",
                             hint="run the design without --resume first (it writes the checkpoint there)")
        data = self.path.read_bytes()
        try:
            with np.load(io.BytesIO(data), allow_pickle=False) as z:
                sig = json.loads(str(z["signature"]))
                x, values, viol = z["x"], z["values"], z["violations"]
                evaluations, stopped = int(z["evaluations"]), str(z["stopped"])
        except (OSError, ValueError, KeyError) as exc:
            raise InputError(f"{self.path}: not a design checkpoint ({exc})") from None
        diff = [k for k in self.signature if sig.get(k) != self.signature[k]]
        if diff:
            raise InputError(f"{self.path}: the checkpoint is of another design (differs in {', '.join(diff)})",
                             hint="resume with the same options as the interrupted run, or drop --resume")
        if not (len(x) == len(values) == len(viol)) or not (np.isfinite(x).all()):
            raise InputError(f"{self.path}: the checkpoint's arrays disagree in length or hold non-numbers")
        for row, v, g in zip(x, values, viol):
            self.known[row.tobytes()] = (v, g)
        self.resumed = {"from": str(self.path), "sha256": hashlib.sha256(data).hexdigest(),
                        "evaluations_in_checkpoint": evaluations, "stopped_then": stopped}

    def answer(self, x: np.ndarray, score) -> tuple[np.ndarray, np.ndarray]:
        """Values and violations of candidates x: those held answered from the checkpoint, the others scored
        by ``score(x_missing)`` in one batch."""
        got = [self.known.get(row.tobytes()) for row in x]
        missing = [i for i, g in enumerate(got) if g is None]
        self.reused += len(x) - len(missing)
        if len(missing) == len(x):
            return score(x)
        if missing:
            v, g = score(x[missing])
            for j, i in enumerate(missing):
                got[i] = (v[j], g[j])
        return np.vstack([g[0] for g in got]), np.vstack([g[1] for g in got])  # type: ignore[index]

    def save_every(self, archive, evaluations: int) -> None:
        if time.perf_counter() - self.last_save >= SAVE_INTERVAL_S:
            self.save(archive, evaluations, "running")

    def save(self, archive, evaluations: int, stopped: str) -> None:
        from ..io.atomic import write_bytes

        p = len(archive.x[0][0]) if archive.x else 0
        x, values, viol = archive.arrays(p, 0, 0) if not archive.x else (
            np.vstack(archive.x), np.vstack(archive.values), np.vstack(archive.violations))
        buf = io.BytesIO()
        np.savez(buf, x=x, values=values, violations=viol, evaluations=np.array(evaluations),
                 stopped=np.array(stopped), signature=np.array(json.dumps(self.signature, sort_keys=True)))
        self.path.parent.mkdir(parents=True, exist_ok=True)
        write_bytes(self.path, buf.getvalue())
        self.last_save = time.perf_counter()

    def discard(self) -> None:
        """Remove the checkpoint and the folders this run created (a design that failed writes nothing)."""
        if not self.existed:
            self.path.unlink(missing_ok=True)
        for d in self.new_folders:
            if d.is_dir() and not any(d.iterdir()):
                d.rmdir()

    def record(self) -> dict:
        """The run record's ``checkpoint`` and ``resumed`` entries (``resumed`` null for a fresh run)."""
        out: dict = {"checkpoint": str(self.path), "resumed": None}
        if self.resumed is not None:
            out["resumed"] = dict(self.resumed, evaluations_reused=self.reused)
        return out
