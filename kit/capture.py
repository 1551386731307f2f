"""The capture: one measured sweep with where it came from and what was found in it.

A :class:`Capture` is immutable. Corrections and other transformations return a new
Capture (see :meth:`Capture.derive`) and record what they did in ``provenance``; the
input is never changed.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any, Literal

import numpy as np

from kit.units import eng

if TYPE_CHECKING:  # pragma: no cover - typing only
    import skrf

Severity = Literal["error", "warning", "info"]
SEVERITIES: tuple[str, ...] = ("error", "warning", "info")


@dataclass(frozen=True)
class Finding:
    """One thing the pre-flight check noticed in a file.

    Attributes
    ----------
    severity : {"error", "warning", "info"}
        "error": the file cannot be trusted and is refused; "warning": it loads, but
        the user should know; "info": context only.
    message : str
        Plain words, naming what is wrong.
    line : int or None
        1-based line number in the file, where one applies.
    fix : str or None
        A suggested fix, where one exists.
    code : str
        Short stable identifier (for example ``"nan-values"``) for programs and tests.
    path : str or None
        The file the finding is about.
    """

    severity: Severity
    message: str
    line: int | None = None
    fix: str | None = None
    code: str = ""
    path: str | None = None

    def __post_init__(self) -> None:
        if self.severity not in SEVERITIES:
            raise ValueError(f"severity must be one of {SEVERITIES}, got {self.severity!r}")

    def __str__(self) -> str:
        where = self.path or "<data>"
        if self.line is not None:
            where += f":{self.line}"
        text = f"{where}: {self.severity}: {self.message}"
        if self.fix:
            text += f" (fix: {self.fix})"
        return text

    def to_dict(self) -> dict[str, Any]:
        """Plain dict, for tables and JSON."""
        return dataclasses.asdict(self)


class CaptureError(ValueError):
    """A capture could not be read or used.

    Attributes
    ----------
    path : str or None
        The file concerned.
    line : int or None
        1-based line number, where one applies.
    findings : tuple of Finding
        The error-level findings behind the refusal (may be empty).
    """

    def __init__(
        self,
        message: str,
        path: str | Path | None = None,
        line: int | None = None,
        findings: tuple[Finding, ...] | list[Finding] = (),
    ) -> None:
        self.path = None if path is None else str(path)
        self.line = line
        self.findings = tuple(findings)
        self.reason = message
        prefix = ""
        if self.path is not None:
            prefix = self.path + (f":{line}" if line is not None else "") + ": "
        super().__init__(prefix + message)


@dataclass(frozen=True, eq=False)
class Capture:
    """One sweep: a scikit-rf Network plus identity, metadata and findings.

    Attributes
    ----------
    network : skrf.Network
        The S-parameters on the capture's frequency grid.
    path : pathlib.Path or None
        The file it was read from (None for data made in memory).
    sha256 : str or None
        SHA-256 of the file's bytes, hex (None for data made in memory).
    meta : dict
        ``comments`` (every comment line verbatim), ``option_line``, ``reference_ohm``,
        ``date`` and ``correction_state`` where a header states them, ``fields`` from a
        file-name pattern, plus anything a reader adds.
    findings : tuple of Finding
        Warnings and information from the pre-flight check (errors are raised instead).
    provenance : tuple of dict
        What was done to the data since it was read (corrections, resampling), in order.
    """

    network: "skrf.Network"
    path: Path | None = None
    sha256: str | None = None
    meta: dict[str, Any] = field(default_factory=dict)
    findings: tuple[Finding, ...] = ()
    provenance: tuple[dict[str, Any], ...] = ()

    @property
    def f_hz(self) -> np.ndarray:
        """Frequency grid [Hz] (a read-only view)."""
        f = self.network.frequency.f.view()
        f.flags.writeable = False
        return f

    @property
    def s(self) -> np.ndarray:
        """S-parameters, shape (points, ports, ports) (a read-only view)."""
        s = self.network.s.view()
        s.flags.writeable = False
        return s

    @property
    def ports(self) -> int:
        """Number of ports."""
        return int(self.network.nports)

    @property
    def points(self) -> int:
        """Number of frequency points."""
        return int(self.network.frequency.npoints)

    @property
    def z0(self) -> np.ndarray:
        """Port reference impedances [ohm], shape (points, ports)."""
        return np.asarray(self.network.z0)

    @property
    def name(self) -> str:
        """A short name: the file stem, else the network's name."""
        if self.path is not None:
            return self.path.stem
        return str(self.network.name or "capture")

    @property
    def fields(self) -> dict[str, Any]:
        """Metadata fields taken from the file name pattern (may be empty)."""
        return dict(self.meta.get("fields", {}))

    def derive(self, network: "skrf.Network", step: dict[str, Any] | None = None,
               findings: tuple[Finding, ...] = ()) -> "Capture":
        """A new Capture with another network, the same identity, and one more provenance step."""
        prov = self.provenance + ((dict(step),) if step else ())
        return dataclasses.replace(
            self, network=network, findings=self.findings + tuple(findings), provenance=prov
        )

    def __repr__(self) -> str:
        f = self.network.frequency.f
        span = f"{eng(f[0], 'Hz', 7)} to {eng(f[-1], 'Hz', 7)}" if len(f) else "empty"
        warn = sum(1 for x in self.findings if x.severity == "warning")
        return (f"Capture({self.name!r}, ports={self.ports}, points={self.points}, {span}, "
                f"warnings={warn}, steps={len(self.provenance)})")


def from_network(network: "skrf.Network", meta: dict[str, Any] | None = None) -> Capture:
    """Wrap an in-memory scikit-rf Network as a Capture (no file, no hash)."""
    return Capture(network=network, path=None, sha256=None, meta=dict(meta or {}))
