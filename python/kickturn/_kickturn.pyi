# Type stubs of the extension module built from src/python.rs. Each function takes the problem's
# JSON text and its file name (for messages) and returns the command line's --json document as
# JSON text; the package (kickturn/__init__.py) reads files and parses the results.
from typing import List, Optional, Sequence, Tuple

__version__: str
TOOL: str
CAUTION: str
APSIS_TOL_KM: float
INCLINATION_TOL_DEG: float

def fly(text: str, file: Optional[str] = None) -> str: ...
def solve(
    text: str,
    file: Optional[str] = None,
    *,
    max_trajectories: int = 50_000,
    max_wall_s: Optional[float] = None,
    free: Sequence[str] = ...,
    fix: Sequence[str] = ...,
    scan: bool = True,
    nested: bool = False,
    explore: bool = False,
    max_payload: bool = False,
    perturb_seed: Optional[int] = None,
    refine_nodes: Optional[int] = None,
) -> str: ...
def parse_range(option: str, range: str) -> List[float]: ...
def sweep(
    text: str,
    file: Optional[str],
    axis: str,
    values: Sequence[float],
    *,
    max_payload: bool = False,
    max_wall_s: Optional[float] = None,
    max_trajectories: int = 50_000,
) -> str: ...
def grid(
    text: str,
    file: Optional[str],
    axes: Sequence[str],
    rows: Sequence[Sequence[float]],
    *,
    max_payload: bool = False,
    max_wall_s: Optional[float] = None,
    max_trajectories: int = 50_000,
) -> str: ...
def compare(
    problems: Sequence[Tuple[str, Optional[str]]],
    *,
    max_payload: bool = False,
    max_wall_s: Optional[float] = None,
    max_trajectories: int = 50_000,
) -> str: ...
def trade(
    text: str,
    file: Optional[str] = None,
    *,
    max_payload: bool = False,
    max_wall_s: Optional[float] = None,
    max_trajectories: int = 50_000,
) -> str: ...
def trade_size(
    text: str,
    file: Optional[str] = None,
    *,
    max_payload: bool = False,
    max_wall_s: Optional[float] = None,
    max_trajectories: int = 50_000,
) -> int: ...
def trade_batch(
    text: str,
    file: Optional[str],
    indices: Sequence[int],
    *,
    max_payload: bool = False,
    max_wall_s: Optional[float] = None,
    max_trajectories: int = 50_000,
) -> str: ...
def trade_report(
    text: str, file: Optional[str], values: Sequence[Optional[float]], *, max_payload: bool = False
) -> str: ...
def dispersions(
    text: str,
    file: Optional[str] = None,
    *,
    samples: int = 1000,
    seed: int = 1,
    open_loop: bool = False,
    probability: Optional[float] = None,
    confidence: Optional[float] = None,
    apsis_tol_km: float = ...,
    inclination_tol_deg: float = ...,
) -> str: ...
def dispersion_samples(
    text: str,
    file: Optional[str],
    indices: Sequence[int],
    *,
    samples: int = 1000,
    seed: int = 1,
    open_loop: bool = False,
    probability: Optional[float] = None,
    confidence: Optional[float] = None,
    apsis_tol_km: float = ...,
    inclination_tol_deg: float = ...,
) -> str: ...
def dispersion_report(
    text: str,
    file: Optional[str],
    runs: str,
    *,
    samples: int = 1000,
    seed: int = 1,
    open_loop: bool = False,
    probability: Optional[float] = None,
    confidence: Optional[float] = None,
    apsis_tol_km: float = ...,
    inclination_tol_deg: float = ...,
) -> str: ...
