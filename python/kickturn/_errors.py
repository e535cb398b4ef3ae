"""The exceptions kickturn raises (the extension module raises them by name).

Each keeps its constructor arguments in ``args`` so that it survives pickling: an error raised
on a Dask worker arrives on the client as the same class with the same fields.
"""

from __future__ import annotations

import json
from typing import Any, Dict, Optional


class KickturnError(Exception):
    """Any error of kickturn; ``str(e)`` is the command line's message."""

    def __init__(self, message: str, *rest: Any) -> None:
        super().__init__(message, *rest)
        self.message = message

    def __str__(self) -> str:
        return self.message


class ProblemError(KickturnError, ValueError):
    """The problem is malformed or invalid (the command line's exit code 2).

    ``field`` is the JSON path of the offending field (``vehicle.stages[1].isp_vac_s``, or
    ``(document)``), ``reason`` what is wrong with it, ``file`` the problem file's path (``None``
    for a dict).
    """

    def __init__(
        self, message: str, field: str, reason: str, file: Optional[str] = None
    ) -> None:
        super().__init__(message, field, reason, file)
        self.field = field
        self.reason = reason
        self.file = file


class UnreachableError(KickturnError):
    """The target inclination cannot be reached by a direct ascent from the site (the command
    line's exit code 1). ``info`` is the object that ``--json`` prints in that case."""

    def __init__(self, message: str, info: str) -> None:
        super().__init__(message, info)
        self.info: Dict[str, Any] = json.loads(info)


class OptionError(KickturnError, ValueError):
    """An option is out of its range or contradicts another."""
