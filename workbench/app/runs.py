"""Engine runs for the app: settings from the form, bounds, and a worker process per run.

The page never runs the engine in its own script thread. :func:`start_run`
starts one worker process per run (forked from a ``forkserver`` that was
started clean, so nothing of the server's threads or locks is inherited, and
that has the engine's modules imported already) that calls the same library function as
the CLI (:func:`workbench.matching.analyse.analyse_peaks`) and sends back a
picklable :class:`~workbench.matching.presentation.MatchView`. The page
polls the :class:`RunHandle` for its stage and elapsed time and can cancel
it (the process is terminated; nothing was written). A run that goes wrong
or runs long therefore never holds the server for other sessions.

Tolerance settings: each rule has its own field, unit, default and bounds
(:data:`TOLERANCE_FIELDS`). The bounds are the form's plausibility limits,
checked before a run starts (:func:`check_tolerance`); the library's own
checks (``ToleranceSpec``, ``MatchParameters``) run as well, because the
parameters are built with the library's classes before the worker starts.
"""

from __future__ import annotations

import multiprocessing as mp
import time
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any, Literal

from workbench.errors import InputError, ValueRangeError, WorkbenchError

__all__ = [
    "TOLERANCE_FIELDS",
    "ResultCache",
    "RunHandle",
    "RunRequest",
    "ToleranceField",
    "analysis_parameters",
    "build_parameters",
    "check_tolerance",
    "start_run",
    "tolerance_rules",
    "warm_up",
]


@dataclass(frozen=True)
class ToleranceField:
    """One tolerance rule as a form field: label, unit, default and accepted range."""

    rule: str
    label: str
    unit: str
    default: float
    low: float
    high: float
    hint: str


#: Form fields per (axis, rule). ``auto`` has no value: it is the CLI's default rule.
#: Ranges are plausibility limits of the form (common practice, no source): optical
#: spectrometers resolve 0.001–1 nm, silicon-drift XRF detectors ~120–250 eV FWHM.
TOLERANCE_FIELDS: dict[tuple[str, str], ToleranceField] = {
    ("wavelength", "resolving_power"): ToleranceField(
        "resolving_power", "Resolving power R (window = λ/R)", "λ/Δλ", 5000.0, 100.0, 1e6,
        "a typical echelle or 0.5 m spectrograph has R ≈ 5000",
    ),
    ("wavelength", "fixed"): ToleranceField(
        "fixed", "Fixed half-window (nm)", "nm", 0.05, 1e-4, 2.0,
        "a few hundredths of a nanometre for a typical spectrometer",
    ),
    ("wavelength", "fwhm"): ToleranceField(
        "fwhm", "Factor × each peak's FWHM", "×", 0.5, 0.05, 5.0,
        "0.5 puts a line inside the peak's half-maximum span",
    ),
    ("energy", "fixed"): ToleranceField(
        "fixed", "Fixed half-window (eV)", "eV", 50.0, 1.0, 500.0,
        "about half the detector's FWHM (≈ 150 eV at Mn Kα for a silicon-drift detector)",
    ),
    ("energy", "fwhm"): ToleranceField(
        "fwhm", "Factor × each peak's FWHM", "×", 0.5, 0.05, 5.0,
        "0.5 puts a line inside the peak's half-maximum span",
    ),
}  # fmt: skip


def tolerance_rules(axis: str) -> list[str]:
    """Rules offered on this axis, ``auto`` (the CLI's default) first."""
    return ["auto"] + [rule for (ax, rule) in TOLERANCE_FIELDS if ax == axis]


def check_tolerance(axis: str, rule: str, value: float | None) -> None:
    """Refuse a tolerance value outside its field's range, naming the field and the range.

    Raises
    ------
    ValueRangeError
        When the value is missing, not finite or out of range.
    """
    if rule == "auto":
        return
    f = TOLERANCE_FIELDS.get((axis, rule))
    if f is None:
        raise ValueRangeError(
            f"tolerance rule {rule!r} is not offered on the {axis} axis",
            f"choose one of {', '.join(tolerance_rules(axis))}",
        )
    if value is None or not (f.low <= float(value) <= f.high):
        shown = "nothing" if value is None else f"{float(value):g} {f.unit}"
        raise ValueRangeError(
            f"{f.label}: {shown} is outside the accepted range {f.low:g}–{f.high:g} {f.unit}",
            f"enter a value in that range ({f.hint}), or choose 'auto'",
        )


def build_parameters(
    *,
    axis: str,
    tolerance_rule: str,
    tolerance_value: float | None,
    temperature_K: float | None,
    mode: str,
    elements: Sequence[str] | None = None,
    apply_calibration: bool | None = None,
) -> Any:
    """MatchParameters from the page's controls, bounds checked first.

    ``auto`` gives exactly the CLI's default ``ToleranceSpec("auto")``.
    """
    from workbench.matching import MatchParameters, ToleranceSpec

    check_tolerance(axis, tolerance_rule, tolerance_value)
    if tolerance_rule == "auto":
        tol = ToleranceSpec("auto")
    else:
        tol = ToleranceSpec(tolerance_rule, float(tolerance_value))  # type: ignore[arg-type]
    return MatchParameters(
        tolerance=tol,
        temperature_K=float(temperature_K) if temperature_K else None,
        elements=tuple(sorted(set(elements))) if elements else None,
        mode=mode,  # type: ignore[arg-type]
        apply_calibration=apply_calibration,
    )


def analysis_parameters(
    params: Any,
    read_options: Mapping[str, Any],
    original_rows: Sequence[Mapping[str, Any]],
    edits: Sequence[Mapping[str, Any]],
    set_ids: Sequence[str],
) -> dict[str, Any]:
    """What is needed to redo the analysis: engine settings, reading, peak table and edits.

    The peak table as read (or detected) always travels as its row count and
    the SHA-256 of its rows' canonical JSON. Its rows themselves are kept when
    the user edited it (the edits refer to them); without edits the table is
    exactly what the stored file gives with the recorded reading options, so
    the digest is enough to check a re-run and the record stays small.
    """
    import hashlib
    import json

    rows = [dict(r) for r in original_rows]
    digest = hashlib.sha256(
        json.dumps(rows, sort_keys=True, separators=(",", ":"), ensure_ascii=False).encode()
    ).hexdigest()
    table: dict[str, Any] = {
        "n_rows": len(rows),
        "rows_sha256": digest,
        "edits": [dict(e) for e in edits],
        "n_edits": len(edits),
    }
    if edits:
        table["original_rows"] = rows
    return {
        "engine": params.to_dict(),
        "reference_set_ids": list(set_ids),
        "reading": dict(read_options),
        "peak_table": table,
    }


class ResultCache:
    """The last few finished runs, by what defines them (shared by the app's sessions).

    The key is the input's SHA-256 with :func:`analysis_parameters` (engine
    settings, reference sets, reading options, peak-table digest and edits),
    so a repeated run of the same input with the same settings is shown at
    once instead of being matched again.
    """

    def __init__(self, size: int = 8) -> None:
        from collections import OrderedDict
        from threading import Lock

        self._items: OrderedDict[str, Any] = OrderedDict()
        self._size = int(size)
        self._lock = Lock()

    @staticmethod
    def key(input_sha256: str, parameters: Mapping[str, Any]) -> str:
        """The cache key of a run (SHA-256 of the canonical JSON of what defines it)."""
        import hashlib
        import json

        text = json.dumps([input_sha256, parameters], sort_keys=True, default=str)
        return hashlib.sha256(text.encode()).hexdigest()

    def get(self, key: str) -> Any:
        """The view stored under ``key``, or None."""
        with self._lock:
            view = self._items.get(key)
            if view is not None:
                self._items.move_to_end(key)
            return view

    def put(self, key: str, view: Any) -> None:
        """Keep ``view`` under ``key``, dropping the oldest beyond the size."""
        with self._lock:
            self._items[key] = view
            self._items.move_to_end(key)
            while len(self._items) > self._size:
                self._items.popitem(last=False)


# ----------------------------------------------------------------------------- worker


@dataclass(frozen=True)
class RunRequest:
    """Everything a worker needs (all picklable): the peak list, sets, settings, spectrum."""

    peaks: Any
    set_ids: tuple[str, ...]
    params: Any
    spectrum: Any = None


def _worker(conn: Any, request: RunRequest) -> None:
    """Body of the worker process: stages, then the view or an error, over ``conn``."""
    try:
        import os

        # Interactive requests of every session come first: the run yields some CPU.
        os.nice(5)
        conn.send(("stage", 0.15, "loading the reference sets"))
        from workbench.matching.analyse import analyse_peaks
        from workbench.matching.presentation import MatchView

        conn.send(("stage", 0.35, "matching lines and weighing the evidence"))
        outcome = analyse_peaks(
            request.peaks, list(request.set_ids), request.params, spectrum=request.spectrum
        )
        conn.send(("stage", 0.9, "preparing the display"))
        conn.send(("done", MatchView.from_outcome(outcome)))
    except WorkbenchError as exc:
        conn.send(("error", type(exc).__name__, exc.problem, exc.remedy))
    except MemoryError:
        conn.send(("error", "ResourceError", "the run ran out of memory", "narrow the settings"))
    except Exception as exc:  # a lab user gets a message, not a traceback
        conn.send(
            (
                "error",
                "WorkbenchError",
                f"the run failed unexpectedly ({type(exc).__name__}: {exc})",
                "report this to the workbench maintainers with the input file",
            )
        )
    finally:
        conn.close()


@dataclass
class RunHandle:
    """A run in its worker process, as the page sees it.

    Attributes
    ----------
    state : {"running", "done", "failed", "cancelled"}
    stage : str
        What the worker is doing now.
    fraction : float
        Rough progress, 0–1 (by stage; the engine has no finer progress yet).
    view : MatchView or None
        The result once ``state == "done"``.
    error : WorkbenchError or None
        Once ``state == "failed"``.
    """

    process: Any
    conn: Any
    started: float = field(default_factory=time.monotonic)
    state: Literal["running", "done", "failed", "cancelled"] = "running"
    stage: str = "starting a worker process"
    fraction: float = 0.05
    view: Any = None
    error: WorkbenchError | None = None
    finished: float | None = None

    @property
    def elapsed_s(self) -> float:
        """Seconds since the run started (frozen once it ended)."""
        return (self.finished or time.monotonic()) - self.started

    def poll(self) -> str:
        """Read what the worker sent so far; return the state."""
        if self.state != "running":
            return self.state
        try:
            while self.conn.poll():
                msg = self.conn.recv()
                if msg[0] == "stage":
                    self.fraction, self.stage = float(msg[1]), str(msg[2])
                elif msg[0] == "done":
                    self.view, self.state = msg[1], "done"
                elif msg[0] == "error":
                    self.error, self.state = _error(msg[1], msg[2], msg[3]), "failed"
        except (EOFError, OSError):
            pass
        if self.state == "running" and not self.process.is_alive():
            self.process.join()
            self.error = WorkbenchError(
                f"the worker process stopped without a result (exit code {self.process.exitcode})",
                "run again; if it keeps failing, report it with the input file",
            )
            self.state = "failed"
        if self.state != "running":
            self._finish()
        return self.state

    def wait(self, timeout_s: float) -> str:
        """Poll until the run ends or ``timeout_s`` passed; return the state.

        Lets a page show a quick run at once (one redraw) and fall back to the
        progress display only for longer runs; the engine still runs in the worker.
        """
        deadline = time.monotonic() + float(timeout_s)
        while self.poll() == "running" and time.monotonic() < deadline:
            time.sleep(0.02)
        return self.state

    def cancel(self) -> None:
        """Stop the worker (nothing was written); the state becomes ``cancelled``."""
        if self.state == "running":
            self.process.terminate()
            self.state = "cancelled"
            self._finish()

    def _finish(self) -> None:
        self.finished = self.finished or time.monotonic()
        self.process.join(timeout=5)
        if self.process.is_alive():
            self.process.kill()
            self.process.join(timeout=5)
        self.conn.close()


def _error(kind: str, problem: str, remedy: str) -> WorkbenchError:
    import workbench.errors as errors

    cls = getattr(errors, kind, None)
    if not (isinstance(cls, type) and issubclass(cls, WorkbenchError)):
        cls = WorkbenchError
    return cls(problem, remedy)


_PRELOAD = ["workbench.matching.analyse", "workbench.matching.presentation"]


def _context() -> Any:
    """The ``forkserver`` context with the engine's modules preloaded.

    The fork server is started once, clean, and forks each worker: a run pays
    neither the import time nor inherits anything from the app's threads.
    """
    ctx = mp.get_context("forkserver")
    ctx.set_forkserver_preload(_PRELOAD)
    return ctx


def warm_up() -> None:
    """Start the fork server now (it imports the engine once), so the first run is quick."""
    from multiprocessing import forkserver

    _context()
    forkserver.ensure_running()


def start_run(request: RunRequest) -> RunHandle:
    """Start a worker process for one run and return its handle at once."""
    if not request.set_ids:
        raise InputError("no reference set chosen", "choose at least one reference set")
    ctx = _context()
    parent, child = ctx.Pipe(duplex=False)
    proc = ctx.Process(target=_worker, args=(child, request), daemon=True, name="workbench-run")
    proc.start()
    child.close()
    return RunHandle(proc, parent)
