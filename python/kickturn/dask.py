"""Sweeps, trade grids, trades and dispersions on a Dask cluster (dask.distributed), through a ``distributed.Client`` you
give: a ``LocalCluster`` on a laptop, dask-jobqueue on a batch cluster, or Kubernetes — only the
line that makes the client changes (docs/python.md).

How the work is split: the study's points are cut into batches (``batch_size`` points each; by
default about four batches per worker thread), each batch is one task that solves its points
with the same library function as ``kickturn.sweep`` / ``kickturn.trade`` (the points of a batch
run in parallel on the worker's cores), and the results are gathered in input order. Every point
is solved on its own from the problem text and its own value, so the document is the same
whatever the batch size or the number of workers, and equal to the single-process call (and to
the command line's ``--json``) — except with ``max_wall_s``, which makes any solve depend on the
machine.

The problem is read once on the client and its text is shipped in each task, so the workers need
kickturn installed (the same version) but not the problem file.

Adding a study: write a module-level batch function ``f(text, file, items, **options) -> list``
that returns one result per item of ``items`` (a batch), and call :func:`map_batches`. A sampled
study (as :func:`dispersions`) must draw sample ``i`` from its own seeded stream (``stream(seed,
i)`` in kickturn's ``core::random``), never from a generator that runs on through a batch, so that
the split does not change the samples: pass the sample indices as the items.
"""

from __future__ import annotations

import json
import math
from typing import (
    TYPE_CHECKING,
    Any,
    Callable,
    Dict,
    List,
    Mapping,
    Optional,
    Sequence,
    TypeVar,
    Union,
)

from . import (
    APSIS_TOL_KM,
    INCLINATION_TOL_DEG,
    Problem,
    Range,
    _kickturn,
    dispersion_options,
    grid_rows,
    read_problem,
    sweep_axis,
)
from . import frames as _frames

if TYPE_CHECKING:  # pragma: no cover
    import distributed
    import pandas

__all__ = ["batches", "dispersions", "grid", "map_batches", "sweep", "trade"]

T = TypeVar("T")

#: Batches per worker thread when no ``batch_size`` is given: enough to balance points of
#: uneven cost, few enough that the task overhead (milliseconds) stays small next to a solve.
BATCHES_PER_THREAD = 4


def batches(items: Sequence[T], batch_size: int) -> List[List[T]]:
    """``items`` cut into consecutive batches of ``batch_size`` (the last may be shorter)."""
    if batch_size < 1:
        raise ValueError(f"batch_size: must be at least 1, got {batch_size}")
    return [list(items[i : i + batch_size]) for i in range(0, len(items), batch_size)]


def _default_batch_size(client: "distributed.Client", n: int) -> int:
    threads = max(1, sum(client.nthreads().values()))
    return max(1, math.ceil(n / (BATCHES_PER_THREAD * threads)))


def map_batches(
    client: "distributed.Client",
    fn: Callable[..., List[Any]],
    items: Sequence[Any],
    *args: Any,
    batch_size: Optional[int] = None,
    **kwargs: Any,
) -> List[Any]:
    """Runs ``fn(*args, batch, **kwargs)`` as one task per batch of ``items`` on ``client`` and
    returns the results of every item, in input order (``fn`` returns one result per item of its
    batch). ``fn`` must be importable on the workers (a module-level function). An error in any
    task is raised here (kickturn's exceptions arrive with their fields) and the other tasks are
    cancelled."""
    if not items:
        return []
    size = batch_size if batch_size is not None else _default_batch_size(client, len(items))
    parts = batches(items, size)
    # pure=False: each task runs (no result shared between equal-looking tasks).
    futures = [client.submit(fn, *args, part, pure=False, **kwargs) for part in parts]
    try:
        results = client.gather(futures)
    finally:
        client.cancel(futures)
    out: List[Any] = []
    for part, got in zip(parts, results):
        if len(got) != len(part):
            raise RuntimeError(f"a batch of {len(part)} items returned {len(got)} results")
        out.extend(got)
    return out


def _sweep_batch(
    text: str, file: Optional[str], axis: str, values: List[float], **options: Any
) -> List[Dict[str, Any]]:
    """The points of a sweep over ``values`` (one task)."""
    points: List[Dict[str, Any]] = json.loads(_kickturn.sweep(text, file, axis, values, **options))[
        "points"
    ]
    return points


def _grid_batch(
    text: str, file: Optional[str], axes: List[str], rows: List[List[float]], **options: Any
) -> List[Dict[str, Any]]:
    """The points of the grid rows ``rows`` (one task)."""
    points: List[Dict[str, Any]] = json.loads(_kickturn.grid(text, file, axes, rows, **options))[
        "points"
    ]
    return points


def _trade_batch(
    text: str, file: Optional[str], indices: List[int], **options: Any
) -> List[List[Any]]:
    """``[point, objective value]`` of the trade points ``indices`` (one task)."""
    pairs: List[List[Any]] = json.loads(_kickturn.trade_batch(text, file, indices, **options))
    return pairs


def _dispersion_batch(
    text: str, file: Optional[str], indices: List[int], **options: Any
) -> List[Dict[str, Any]]:
    """The dispersed samples ``indices`` (one task; they fly in parallel on the worker's
    cores)."""
    runs: List[Dict[str, Any]] = json.loads(
        _kickturn.dispersion_samples(text, file, indices, **options)
    )
    return runs


def _frame_or_report(
    report: Dict[str, Any], as_frame: Optional[bool], frame: Callable[[Dict[str, Any]], Any]
) -> Any:
    if as_frame is None:
        try:
            import pandas  # noqa: F401
        except ImportError:
            as_frame = False
        else:
            as_frame = True
    return frame(report) if as_frame else report


def sweep(
    client: "distributed.Client",
    problem: Problem,
    *,
    azimuth: Optional[Range] = None,
    inclination: Optional[Range] = None,
    altitude: Optional[Range] = None,
    payload: Optional[Range] = None,
    max_payload: bool = False,
    max_wall_s: Optional[float] = None,
    max_trajectories: int = 50_000,
    batch_size: Optional[int] = None,
    as_frame: Optional[bool] = None,
) -> Union["pandas.DataFrame", Dict[str, Any]]:
    """``kickturn.sweep`` on the cluster behind ``client``.

    Returns a DataFrame (one row per point, ``kickturn.frames.sweep_frame``) whose
    ``attrs["report"]`` is the document ``kickturn.sweep`` returns; with ``as_frame=False``, or
    when pandas is not installed, the document itself.
    """
    axis, values = sweep_axis(
        azimuth=azimuth, inclination=inclination, altitude=altitude, payload=payload
    )
    text, file = read_problem(problem)
    options: Dict[str, Any] = dict(
        max_payload=max_payload, max_wall_s=max_wall_s, max_trajectories=max_trajectories
    )
    # The document without its points, from the library itself: checks the problem and the
    # options here, before any task is sent, and gives the header the command line writes.
    report: Dict[str, Any] = json.loads(_kickturn.sweep(text, file, axis, [], **options))
    report["points"] = map_batches(
        client, _sweep_batch, values, text, file, axis, batch_size=batch_size, **options
    )
    result: Union["pandas.DataFrame", Dict[str, Any]] = _frame_or_report(
        report, as_frame, _frames.sweep_frame
    )
    return result


def grid(
    client: "distributed.Client",
    problem: Problem,
    axes: Mapping[str, Range],
    *,
    max_payload: bool = False,
    max_wall_s: Optional[float] = None,
    max_trajectories: int = 50_000,
    batch_size: Optional[int] = None,
    as_frame: Optional[bool] = None,
) -> Union["pandas.DataFrame", Dict[str, Any]]:
    """``kickturn.grid`` (a trade grid: every combination of values of several sweep axes) on
    the cluster behind ``client``; the grid's rows are the tasks' items.

    Returns a DataFrame (one row per point, a ``swept_<axis>`` column per axis,
    ``kickturn.frames.grid_frame``) whose ``attrs["report"]`` is the document ``kickturn.grid``
    returns; with ``as_frame=False``, or without pandas, the document.
    """
    names, rows = grid_rows(axes)
    text, file = read_problem(problem)
    options: Dict[str, Any] = dict(
        max_payload=max_payload, max_wall_s=max_wall_s, max_trajectories=max_trajectories
    )
    report: Dict[str, Any] = json.loads(_kickturn.grid(text, file, names, [], **options))
    report["rows"] = rows
    report["points"] = map_batches(
        client, _grid_batch, rows, text, file, names, batch_size=batch_size, **options
    )
    result: Union["pandas.DataFrame", Dict[str, Any]] = _frame_or_report(
        report, as_frame, _frames.grid_frame
    )
    return result


def trade(
    client: "distributed.Client",
    problem: Problem,
    *,
    max_payload: bool = False,
    max_wall_s: Optional[float] = None,
    max_trajectories: int = 50_000,
    batch_size: Optional[int] = None,
    as_frame: Optional[bool] = None,
) -> Union["pandas.DataFrame", Dict[str, Any]]:
    """``kickturn.trade`` on the cluster behind ``client``: its re-solved points (two per
    traded parameter) are the tasks' items.

    Returns a DataFrame (one row per factor, ``kickturn.frames.trade_frame``) whose
    ``attrs["report"]`` is the document ``kickturn.trade`` returns, and whose
    ``attrs["points"]`` holds the re-solved points (point ``2k`` is ``+step`` and ``2k + 1``
    ``-step`` of factor ``k``); with ``as_frame=False``, or without pandas, the document.
    """
    text, file = read_problem(problem)
    options: Dict[str, Any] = dict(
        max_payload=max_payload, max_wall_s=max_wall_s, max_trajectories=max_trajectories
    )
    n = _kickturn.trade_size(text, file, **options)
    pairs = map_batches(
        client, _trade_batch, list(range(n)), text, file, batch_size=batch_size, **options
    )
    values = [value for _, value in pairs]
    report: Dict[str, Any] = json.loads(
        _kickturn.trade_report(text, file, values, max_payload=max_payload)
    )
    result: Union["pandas.DataFrame", Dict[str, Any]] = _frame_or_report(
        report, as_frame, _frames.trade_frame
    )
    if not isinstance(result, dict):
        result.attrs["points"] = [point for point, _ in pairs]
    return result


def dispersions(
    client: "distributed.Client",
    problem: Problem,
    *,
    samples: int = 1000,
    seed: int = 1,
    open_loop: bool = False,
    probability: Optional[float] = None,
    confidence: Optional[float] = None,
    apsis_tol_km: float = APSIS_TOL_KM,
    inclination_tol_deg: float = INCLINATION_TOL_DEG,
    batch_size: Optional[int] = None,
    as_frame: Optional[bool] = None,
) -> Union["pandas.DataFrame", Dict[str, Any]]:
    """``kickturn.dispersions`` on the cluster behind ``client``: the sample indices
    ``0 .. samples - 1`` are the tasks' items. Sample ``k`` draws from its own stream of
    ``seed``, so the document equals the single-process one (and the command line's ``--json``)
    for any batch size and number of workers.

    The samples are gathered in index order and the report (statistics, reserve, contributors)
    is built from them here, by the same library function as the single-process study, which
    also flies the nominal flight. Returns a DataFrame (one row per sample,
    ``kickturn.frames.dispersions_frame``) whose ``attrs["report"]`` is the document; with
    ``as_frame=False``, or without pandas, the document.
    """
    text, file = read_problem(problem)
    options = dispersion_options(
        samples, seed, open_loop, probability, confidence, apsis_tol_km, inclination_tol_deg
    )
    # No indices: checks the problem and the options here, before any task is sent.
    _kickturn.dispersion_samples(text, file, [], **options)
    runs = map_batches(
        client, _dispersion_batch, list(range(samples)), text, file, batch_size=batch_size,
        **options,
    )
    report: Dict[str, Any] = json.loads(
        _kickturn.dispersion_report(text, file, json.dumps(runs), **options)
    )
    result: Union["pandas.DataFrame", Dict[str, Any]] = _frame_or_report(
        report, as_frame, _frames.dispersions_frame
    )
    return result
