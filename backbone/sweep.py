"""Parameter sweeps: experiments planned over a grid of τc and field for several labeling schemes, as one table.

:func:`sweep` calls :func:`backbone.plan.plan` once per labeling scheme (and per TROSY mode with
``trosy="both"``) on the outer product of the τc and field axes — plan() is vectorized over the grid — and
lays the result out in *long format*: one row per experiment × TROSY version × labeling × field × τc.

Columns (units in the names)
----------------------------
``experiment``, ``trosy`` (bool: the version walked at that point), ``labeling`` (scheme id),
``deuteration`` (2H fraction at the deuterated sites, NaN for a protonated scheme), ``field_mhz``,
``tau_c_ns``, ``objective`` (what the delays maximize), ``objective_throughput`` (its value at the optimized
delays; 1 is a lossless sensitivity-enhanced transfer), ``textbook_objective_throughput`` (at the textbook
delays, with relaxation), ``relative_sensitivity`` (against the 2D 1H-15N HSQC in the same conditions; 0 for an
infeasible walk), ``feasible``, ``reason``, and the delays in **wide form**: for every named delay of any
experiment in the sweep, ``delay_<name>_ms`` (optimized) and ``textbook_delay_<name>_ms``; NaN in the rows of
experiments that have no delay of that name. Delay names are those of the experiment models (``tau_NH``,
``T_NCA`` …); tied steps share one.

Output
------
:func:`write_table` writes a frame as CSV or JSON (by the file's extension), whole or not at all, and never over
an existing file unless ``force=True``. :func:`write_atomically` is the underlying writer, shared with
:mod:`backbone.plots`.

Grids for the command line
--------------------------
:func:`parse_grid` turns ``"5:50:10"`` (start:stop:count, linear, both ends included),
``"log:1:100:50"`` (geometric) or ``"600,800,900"`` (a list) into an array.
"""

from __future__ import annotations

import json
import math
from collections.abc import Callable, Sequence
from pathlib import Path

import numpy as np

from backbone.errors import BackboneError
from backbone.output import write_atomically

__all__ = [
    "SWEEP_COLUMNS",
    "TABLE_FORMATS",
    "delay_columns",
    "sweep",
    "write_atomically",
    "write_table",
    "parse_grid",
]

#: Columns every sweep frame has, in order; the wide delay columns follow them.
SWEEP_COLUMNS = (
    "experiment",
    "trosy",
    "labeling",
    "deuteration",
    "field_mhz",
    "tau_c_ns",
    "objective",
    "objective_throughput",
    "textbook_objective_throughput",
    "relative_sensitivity",
    "feasible",
    "reason",
)

#: Table formats by file extension.
TABLE_FORMATS = {".csv": "CSV", ".json": "JSON"}

_TROSY_MODES = (False, True, "auto", "both")


def delay_columns(name: str) -> tuple[str, str]:
    """Column names ``(optimized, textbook)`` [ms] of the named delay ``name`` in a sweep frame."""
    return f"delay_{name}_ms", f"textbook_delay_{name}_ms"


# ---------------------------------------------------------------------------------------------------------
# The sweep
# ---------------------------------------------------------------------------------------------------------


def _axis(values, name: str, rng) -> np.ndarray:
    try:
        arr = np.atleast_1d(np.asarray(values, dtype=float))
    except (TypeError, ValueError) as err:
        raise BackboneError(f"sweep: {name} must be numbers, got {values!r}") from err
    if arr.ndim != 1 or arr.size == 0:
        raise BackboneError(f"sweep: {name} must be a non-empty one-dimensional list of values, got shape {arr.shape}")
    rng.check(arr, where=f"sweep: {name}")
    return arr


def _scheme(entry, k: int):
    """A LabelingScheme from an id, a path, a LabelingScheme or a scenario LabelingChoice."""
    from backbone.labeling import LabelingScheme, load_scheme

    if isinstance(entry, LabelingScheme):
        return entry
    if hasattr(entry, "load") and hasattr(entry, "scheme"):
        return entry.load()
    if isinstance(entry, (str, Path)):
        return load_scheme(entry)
    raise BackboneError(
        f"sweep: labelings[{k}] = {entry!r} is not allowed; give a scheme id such as '13c15n', a file path or a "
        f"loaded labeling scheme"
    )


def _frame_of(result, scheme, grid_shape, keep=None):
    """Columns of one PlanResult on the (τc, field) grid; ``keep(e)`` filters experiments."""
    n = int(np.prod(grid_shape))
    deuteration = float(scheme.deuteration) if getattr(scheme, "deuteration", None) is not None else math.nan
    parts = []
    for e in result.experiments:
        if keep is not None and not keep(e):
            continue

        def flat(x):
            return np.broadcast_to(np.asarray(x), grid_shape).ravel()

        cols = {
            "experiment": np.full(n, e.name, dtype=object),
            "trosy": flat(e.trosy).astype(bool),
            "labeling": np.full(n, e.labeling, dtype=object),
            "deuteration": np.full(n, deuteration),
            "field_mhz": flat(e.field_mhz).astype(float),
            "tau_c_ns": flat(e.tau_c_ns).astype(float),
            "objective": np.full(n, e.objective, dtype=object),
            "objective_throughput": flat(e.objective_value).astype(float),
            "textbook_objective_throughput": flat(e.textbook_objective_value).astype(float),
            "relative_sensitivity": flat(e.relative_sensitivity).astype(float),
            "feasible": np.full(n, bool(e.feasible)),
            "reason": np.full(n, e.reason, dtype=object),
        }
        for d, v in e.delays.items():
            opt, tb = delay_columns(d)
            cols[opt] = np.full(n, np.nan) if v is None else flat(v).astype(float) * 1e3
            t = e.textbook_delays.get(d)
            cols[tb] = np.full(n, np.nan) if t is None else flat(t).astype(float) * 1e3
        parts.append(cols)
    return parts


def sweep(
    *,
    tau_c_ns,
    field_mhz,
    labelings: Sequence = ("13c15n",),
    experiments: Sequence[str] | None = None,
    trosy=False,
    s2: float = 1.0,
    tau_e_ns: float = 0.0,
    progress: Callable[[int, int], None] | None = None,
):
    """Plan ``experiments`` on the grid τc × field for every labeling scheme; a long-format DataFrame.

    Parameters
    ----------
    tau_c_ns : float or 1-D array [ns]
        Rotational correlation times, each in 0.1–500 ns.
    field_mhz : float or 1-D array [MHz]
        Fields as the 1H frequency, each in 100–1500 MHz. The grid is the outer product of the two axes.
    labelings : sequence
        Scheme ids, paths, loaded schemes or scenario labeling choices (at least one).
    experiments : sequence of str, optional
        Experiment names or model paths; default every bundled model.
    trosy : False, True, "auto" or "both"
        As :func:`backbone.plan.plan`; ``"both"`` gives a plain and a TROSY row for every TROSY-capable
        experiment (and one row for the others).
    s2, tau_e_ns : model-free order parameter and internal correlation time [ns].
    progress : callable(done, total), optional
        Called after each plan() call (one per labeling and TROSY mode) with the count done and the total.

    Returns
    -------
    pandas.DataFrame
        Columns :data:`SWEEP_COLUMNS` then the wide delay columns (module docstring), rows ordered by labeling,
        TROSY mode, experiment, τc, field.
    """
    import pandas as pd

    from backbone.plan import plan
    from backbone.units import FIELD_MHZ, TAU_C_NS

    if not any(trosy is m or (isinstance(m, str) and trosy == m) for m in _TROSY_MODES):
        raise BackboneError(f"sweep: trosy = {trosy!r} is not allowed; use false, true, 'auto' or 'both'")
    if progress is not None and not callable(progress):
        raise BackboneError(f"sweep: progress must be a callable(done, total), got {progress!r}")
    tau = _axis(tau_c_ns, "tau_c_ns", TAU_C_NS)
    mhz = _axis(field_mhz, "field_mhz", FIELD_MHZ)
    if isinstance(labelings, (str, Path)) or not isinstance(labelings, Sequence) or not labelings:
        raise BackboneError(f"sweep: labelings must be a non-empty list of labeling schemes, got {labelings!r}")
    schemes = [_scheme(entry, k) for k, entry in enumerate(labelings)]
    modes = [False, True] if trosy == "both" else [trosy]
    total = len(schemes) * len(modes)
    grid = (tau.size, mhz.size)
    parts = []
    done = 0
    for scheme in schemes:
        first = {}
        for mode in modes:
            result = plan(
                tau_c_ns=tau[:, None],
                field_mhz=mhz[None, :],
                labeling=scheme,
                experiments=experiments,
                trosy=mode,
                s2=s2,
                tau_e_ns=tau_e_ns,
            )
            if trosy == "both" and mode is True:
                # Only experiments whose TROSY version differs from the plain one add rows.
                def keep(e, first=first):
                    return bool(np.all(e.trosy)) != first[e.name]
            else:
                keep = None
            for e in result.experiments:
                first.setdefault(e.name, bool(np.all(e.trosy)))
            parts.extend(_frame_of(result, scheme, grid, keep))
            done += 1
            if progress is not None:
                progress(done, total)
    frames = [pd.DataFrame(p) for p in parts]
    frame = pd.concat(frames, ignore_index=True, sort=False)
    delay_cols = [c for c in frame.columns if c not in SWEEP_COLUMNS]
    return frame[list(SWEEP_COLUMNS) + delay_cols]


# ---------------------------------------------------------------------------------------------------------
# Writing files
# ---------------------------------------------------------------------------------------------------------


def _json_value(v):
    if isinstance(v, (np.bool_, bool)):
        return bool(v)
    if isinstance(v, (np.integer,)):
        return int(v)
    if isinstance(v, (float, np.floating)):
        return float(v) if math.isfinite(v) else None
    return v


def write_table(frame, path, *, force: bool = False) -> Path:
    """Write a DataFrame to ``path`` as CSV (``.csv``, no index column) or JSON (``.json``: ``{"columns": [...],
    "rows": [{column: value}, ...]}``, NaN as null), whole or not at all; never over an existing file unless
    ``force``. Returns the path. Raises :class:`BackboneError` naming the file (see :func:`write_atomically`)."""
    suffix = Path(path).suffix.lower()

    def write_csv(tmp):
        frame.to_csv(tmp, index=False)

    def write_json(tmp):
        columns = [str(c) for c in frame.columns]
        rows = [
            {c: _json_value(v) for c, v in zip(columns, row)}
            for row in frame.itertuples(index=False, name=None)
        ]
        with open(tmp, "w", encoding="utf-8") as fh:
            json.dump({"columns": columns, "rows": rows}, fh, indent=1, allow_nan=False)
            fh.write("\n")

    writer = write_json if suffix == ".json" else write_csv
    return write_atomically(path, writer, force=force, formats=TABLE_FORMATS, what="table file")


# ---------------------------------------------------------------------------------------------------------
# Grid parsing for the command line
# ---------------------------------------------------------------------------------------------------------


def _number(text: str, option: str, spec: str) -> float:
    try:
        value = float(text)
    except ValueError as err:
        raise BackboneError(f"{option}: {text!r} in {spec!r} is not a number") from err
    if not math.isfinite(value):
        raise BackboneError(f"{option}: {text!r} in {spec!r} is not a finite number")
    return value


def parse_grid(spec: str, *, option: str = "grid", rng=None) -> np.ndarray:
    """Parse a grid written on the command line into a 1-D float array.

    ``"start:stop:count"`` — ``count`` values evenly spaced from start to stop, both included;
    ``"log:start:stop:count"`` — geometrically spaced (start, stop > 0);
    ``"a,b,c"`` or a single number — the values as listed.
    ``option`` names the command-line option in messages; ``rng`` (a :class:`backbone.units.ValidRange`)
    checks every value.
    """
    if not isinstance(spec, str) or not spec.strip():
        raise BackboneError(
            f"{option}: give a grid as start:stop:count, log:start:stop:count or a comma list, got {spec!r}"
        )
    text = spec.strip()
    if ":" in text:
        fields = [f.strip() for f in text.split(":")]
        log = fields[0].lower() == "log"
        if log:
            fields = fields[1:]
        form = "log:start:stop:count" if log else "start:stop:count"
        if len(fields) != 3:
            raise BackboneError(f"{option}: {spec!r} is not of the form {form} (e.g. {'log:1:100:50' if log else '5:50:10'})")
        start, stop = _number(fields[0], option, spec), _number(fields[1], option, spec)
        try:
            count = int(fields[2])
        except ValueError as err:
            raise BackboneError(f"{option}: count {fields[2]!r} in {spec!r} is not a whole number") from err
        if count < 1:
            raise BackboneError(f"{option}: count in {spec!r} must be at least 1, got {count}")
        if count > 1 and start == stop:
            raise BackboneError(f"{option}: start and stop in {spec!r} are equal; give one value or different ends")
        if log:
            if start <= 0 or stop <= 0:
                raise BackboneError(f"{option}: a log grid needs start and stop > 0, got {spec!r}")
            values = np.geomspace(start, stop, count)
        else:
            values = np.linspace(start, stop, count)
    else:
        items = [t.strip() for t in text.split(",")]
        if any(not t for t in items):
            raise BackboneError(f"{option}: {spec!r} has an empty entry; write values separated by commas, e.g. 600,800")
        values = np.array([_number(t, option, spec) for t in items])
    if rng is not None:
        rng.check(values, where=option)
    return values
