"""kickturn: ascent pitch-program optimizer with an exact delta-V loss budget, from Python.

Each function takes a problem (a path to a problem file, or a dict in the problem-file format,
docs/problem-format.md) and returns a dict equal to the command line's ``--json`` output of the
same command::

    import kickturn
    run = kickturn.fly("problems/medium-2stage-leo200.json")
    run["final_mass_kg"], run["budget"]["gravity_loss_mps"]

Errors: :class:`ProblemError` (``field`` holds the JSON path of the bad field),
:class:`UnreachableError`, :class:`OptionError`, all :class:`KickturnError`; a file that cannot
be read raises ``OSError`` as ``open`` does. The interpreter is released while flights run.
Scale-out on a Dask cluster: :mod:`kickturn.dask` (docs/python.md).

Preliminary design only: not for flight software, range safety or licensing; defer to local
codes and licensed practice.
"""

from __future__ import annotations

import itertools
import json
import os
from typing import Any, Dict, List, Mapping, Optional, Sequence, Tuple, Union

from . import _kickturn
from ._errors import KickturnError, OptionError, ProblemError, UnreachableError

__all__ = [
    "CAUTION",
    "KickturnError",
    "OptionError",
    "Problem",
    "ProblemError",
    "Range",
    "UnreachableError",
    "compare",
    "dispersions",
    "fly",
    "grid",
    "read_problem",
    "solve",
    "sweep",
    "trade",
]

__version__: str = _kickturn.__version__
#: The caution every document carries.
CAUTION: str = _kickturn.CAUTION

#: A problem: a path to a problem file (str or path-like), or a dict in the problem-file format.
Problem = Union[str, "os.PathLike[str]", Mapping[str, Any]]
#: A sweep range: ``"FROM:TO:STEP"`` (as on the command line) or the values themselves.
Range = Union[str, Sequence[float]]

#: Largest problem file read, bytes (the command line's limit).
MAX_INPUT_BYTES = 16 * 1024 * 1024

_AXES = ("azimuth", "inclination", "altitude", "payload")

#: Apsis tolerance of a dispersed sample's "target met" by default, km (``--apsis-tol-km``).
APSIS_TOL_KM: float = _kickturn.APSIS_TOL_KM
#: Inclination tolerance of a dispersed sample's "target met" by default, deg.
INCLINATION_TOL_DEG: float = _kickturn.INCLINATION_TOL_DEG


def _plain(value: Any) -> Any:
    """JSON form of numpy scalars and arrays inside a problem dict."""
    if hasattr(value, "tolist"):
        return value.tolist()
    raise TypeError(f"{type(value).__name__} is not a JSON value")


def read_problem(problem: Problem) -> Tuple[str, Optional[str]]:
    """The problem's JSON text and its file name for messages (``None`` for a dict).

    A file is read as the command line reads it (UTF-8, at most 16 MiB), so that its
    ``input_sha256`` is the file's; a dict is written with ``json.dumps``, and its
    ``input_sha256`` is that of the text written.
    """
    if isinstance(problem, Mapping):
        return json.dumps(problem, default=_plain), None
    path = os.fspath(problem)
    if isinstance(path, bytes):
        path = os.fsdecode(path)
    with open(path, "rb") as f:
        data = f.read(MAX_INPUT_BYTES + 1)
    if len(data) > MAX_INPUT_BYTES:
        raise KickturnError(
            f"{path}: larger than {MAX_INPUT_BYTES // (1024 * 1024)} MiB; a problem file is a "
            "few kilobytes of JSON"
        )
    try:
        return data.decode("utf-8"), path
    except UnicodeDecodeError as e:
        raise KickturnError(f"{path}: not UTF-8 text ({e})") from None


def _loads(text: str) -> Dict[str, Any]:
    result: Dict[str, Any] = json.loads(text)
    return result


def fly(problem: Problem) -> Dict[str, Any]:
    """Flies the program in the problem as written: the ``kickturn fly --json`` document."""
    text, file = read_problem(problem)
    return _loads(_kickturn.fly(text, file))


def solve(
    problem: Problem,
    *,
    max_trajectories: int = 50_000,
    max_wall_s: Optional[float] = None,
    free: Sequence[str] = (),
    fix: Sequence[str] = (),
    scan: bool = True,
    nested: bool = False,
    explore: bool = False,
    max_payload: bool = False,
    perturb_seed: Optional[int] = None,
    refine: bool = False,
    refine_nodes: int = 20,
) -> Dict[str, Any]:
    """Tunes the ascent program: the ``kickturn solve --json`` document.

    The options are the command line's: ``max_trajectories`` (``--max-trajectories``),
    ``max_wall_s``, ``free`` and ``fix`` (variable groups), ``scan=False`` (``--no-scan``),
    ``nested``, ``explore``, ``max_payload``, ``perturb_seed``, ``refine`` and
    ``refine_nodes`` (``--refine --refine-nodes N``).
    """
    text, file = read_problem(problem)
    return _loads(
        _kickturn.solve(
            text,
            file,
            max_trajectories=max_trajectories,
            max_wall_s=max_wall_s,
            free=list(free),
            fix=list(fix),
            scan=scan,
            nested=nested,
            explore=explore,
            max_payload=max_payload,
            perturb_seed=perturb_seed,
            refine_nodes=refine_nodes if refine else None,
        )
    )


def sweep_axis(**ranges: Optional[Range]) -> Tuple[str, List[float]]:
    """The one axis given among ``azimuth``, ``inclination``, ``altitude`` and ``payload`` and
    its values (a ``"FROM:TO:STEP"`` range is expanded as the command line expands it)."""
    unknown = sorted(set(ranges) - set(_AXES))
    if unknown:
        raise TypeError(f"sweep: unexpected keyword argument {unknown[0]!r}")
    given = [(k, v) for k, v in ranges.items() if v is not None]
    if len(given) != 1:
        raise OptionError(
            "sweep: give exactly one of azimuth, inclination, altitude, payload"
            + ("" if not given else f" (got {', '.join(k for k, _ in given)})")
        )
    axis, values = given[0]
    return axis, _values(axis, values)


def _values(axis: str, values: Range) -> List[float]:
    if isinstance(values, str):
        return _kickturn.parse_range(axis, values)
    return [float(v) for v in values]


def grid_rows(axes: Mapping[str, Range]) -> Tuple[List[str], List[List[float]]]:
    """The axes of a grid and its rows: every combination of their values, the last axis
    varying fastest (``itertools.product`` order)."""
    names = list(axes)
    unknown = [a for a in names if a not in _AXES]
    if unknown:
        raise OptionError(
            f"grid: `{unknown[0]}` is no axis; azimuth, inclination, altitude or payload"
        )
    values = [_values(a, axes[a]) for a in names]
    return names, [list(row) for row in itertools.product(*values)]


def sweep(
    problem: Problem,
    *,
    azimuth: Optional[Range] = None,
    inclination: Optional[Range] = None,
    altitude: Optional[Range] = None,
    payload: Optional[Range] = None,
    max_payload: bool = False,
    max_wall_s: Optional[float] = None,
    max_trajectories: int = 50_000,
) -> Dict[str, Any]:
    """Re-solves over a range of one of launch azimuth (deg), target inclination (deg), circular
    altitude (km) or payload (kg): the ``kickturn sweep --json`` document.

    Give exactly one range, as ``"FROM:TO:STEP"`` or as a sequence of values:
    ``sweep(p, altitude="200:300:50")`` is ``sweep(p, altitude=[200, 250, 300])``.
    """
    axis, values = sweep_axis(
        azimuth=azimuth, inclination=inclination, altitude=altitude, payload=payload
    )
    text, file = read_problem(problem)
    return _loads(
        _kickturn.sweep(
            text,
            file,
            axis,
            values,
            max_payload=max_payload,
            max_wall_s=max_wall_s,
            max_trajectories=max_trajectories,
        )
    )


def grid(
    problem: Problem,
    axes: Mapping[str, Range],
    *,
    max_payload: bool = False,
    max_wall_s: Optional[float] = None,
    max_trajectories: int = 50_000,
) -> Dict[str, Any]:
    """Re-solves every combination of values of several sweep axes (a trade grid), e.g.
    ``grid(p, {"altitude": "200:400:50", "payload": [6000, 8000]})``.

    The axes are applied to the problem in the mapping's order, each as ``sweep`` applies it,
    and every point is solved as a sweep point: a one-axis grid has the points of ``sweep``.
    The document has ``axes``, ``rows`` (each point's values, the last axis varying fastest)
    and ``points`` (a point's ``value`` is its last axis' value) beside the sweep's header
    fields. There is no such command-line command.
    """
    names, rows = grid_rows(axes)
    text, file = read_problem(problem)
    return _loads(
        _kickturn.grid(
            text,
            file,
            names,
            rows,
            max_payload=max_payload,
            max_wall_s=max_wall_s,
            max_trajectories=max_trajectories,
        )
    )


def compare(
    problems: Sequence[Problem],
    *,
    max_payload: bool = False,
    max_wall_s: Optional[float] = None,
    max_trajectories: int = 50_000,
) -> Dict[str, Any]:
    """Solves two or more problems: the ``kickturn compare --json`` document."""
    sources = [read_problem(p) for p in problems]
    return _loads(
        _kickturn.compare(
            sources,
            max_payload=max_payload,
            max_wall_s=max_wall_s,
            max_trajectories=max_trajectories,
        )
    )


def trade(
    problem: Problem,
    *,
    max_payload: bool = False,
    max_wall_s: Optional[float] = None,
    max_trajectories: int = 50_000,
) -> Dict[str, Any]:
    """Trade factors by central differences of re-solved problems: the
    ``kickturn trade --json`` document."""
    text, file = read_problem(problem)
    return _loads(
        _kickturn.trade(
            text,
            file,
            max_payload=max_payload,
            max_wall_s=max_wall_s,
            max_trajectories=max_trajectories,
        )
    )


def dispersion_options(
    samples: int = 1000,
    seed: int = 1,
    open_loop: bool = False,
    probability: Optional[float] = None,
    confidence: Optional[float] = None,
    apsis_tol_km: float = APSIS_TOL_KM,
    inclination_tol_deg: float = INCLINATION_TOL_DEG,
) -> Dict[str, Any]:
    """The options of a dispersion study as the extension module's keyword arguments."""
    return dict(
        samples=samples,
        seed=seed,
        open_loop=open_loop,
        probability=probability,
        confidence=confidence,
        apsis_tol_km=apsis_tol_km,
        inclination_tol_deg=inclination_tol_deg,
    )


def dispersions(
    problem: Problem,
    *,
    samples: int = 1000,
    seed: int = 1,
    open_loop: bool = False,
    probability: Optional[float] = None,
    confidence: Optional[float] = None,
    apsis_tol_km: float = APSIS_TOL_KM,
    inclination_tol_deg: float = INCLINATION_TOL_DEG,
) -> Dict[str, Any]:
    """Flies the program ``samples`` times with launch-day dispersions drawn from the problem's
    ``dispersions`` section, and sizes the flight performance reserve: the
    ``kickturn dispersions --json`` document.

    The options are the command line's (``--samples``, ``--seed``, ``--open-loop``,
    ``--probability``, ``--confidence``, ``--apsis-tol-km``, ``--inclination-tol-deg``); the
    same seed gives the same document. A separate dispersions file (``--dispersions FILE``) is
    a dict problem with its ``dispersions`` key set. The samples fly in parallel on every core;
    :func:`kickturn.dask.dispersions` spreads them over a cluster.
    """
    text, file = read_problem(problem)
    options = dispersion_options(
        samples, seed, open_loop, probability, confidence, apsis_tol_km, inclination_tol_deg
    )
    return _loads(_kickturn.dispersions(text, file, **options))
