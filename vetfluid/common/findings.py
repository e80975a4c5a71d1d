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

    @property
    def title(self) -> str:
        """The finding in a line, for a summary: its message's first sentence, without the
        full stop ("Potassium would run at 0.77 mmol/kg/h, above the 0.5 mmol/kg/h
        ceiling"). Derived from the message, so it cannot drift from it. Not its first
        clause: messages state the fact before the problem ("No serum Na was entered; …
        faster than 0.5 mmol/L/h", "The deficit … is replaced over 4 h: faster than the
        guidelines"), and a title that stopped at the fact would hide the problem. A full
        stop ends the sentence only outside brackets and before a space or the end, so a
        decimal point (0.5) does not."""
        text = self.message.strip()
        depth = 0
        for i, char in enumerate(text):
            if char in "([":
                depth += 1
            elif char in ")]":
                depth = max(depth - 1, 0)
            elif depth == 0 and char == "." and (i + 1 == len(text) or text[i + 1].isspace()):
                return text[:i].rstrip() or text
        return text

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
