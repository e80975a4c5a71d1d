"""Findings: what the planner wants the clinician to see, with a severity.

``info`` informs; ``soft`` warns and must be acknowledged with a reason before the
plan is marked ready; ``hard`` blocks marking the plan ready. Codes are stable
(tests, saved records and the window key on them); messages name the value, the
limit and what to do.
"""

from __future__ import annotations

from dataclasses import dataclass

SEVERITIES = ("info", "soft", "hard")


@dataclass(frozen=True, kw_only=True)
class Finding:
    severity: str
    code: str
    message: str
    action: str = ""
    source_id: str | None = None

    def __post_init__(self) -> None:
        if self.severity not in SEVERITIES:
            raise ValueError(f"severity must be one of {SEVERITIES}, not {self.severity!r}")

    def as_dict(self) -> dict[str, object]:
        return {
            "severity": self.severity,
            "code": self.code,
            "message": self.message,
            "action": self.action,
            "source_id": self.source_id,
        }


def worst(findings: tuple[Finding, ...] | list[Finding]) -> str | None:
    """The most severe severity present, or None when there are no findings."""
    present = {f.severity for f in findings}
    for severity in reversed(SEVERITIES):
        if severity in present:
            return severity
    return None
