"""Published granular-filter criteria, one module per method family.

Placeholder interface while the criteria modules are being written: the
outcome is empty, so ``evaluate`` reports only lab QA and band checks.
"""

from __future__ import annotations

from dataclasses import dataclass, field


@dataclass(frozen=True)
class FilterOutcome:
    checks: list = field(default_factory=list)
    limits: dict = field(default_factory=dict)
    base_info: dict = field(default_factory=dict)
    findings: list = field(default_factory=list)
    rules_used: dict = field(default_factory=dict)


def run_filter_checks(sample, base=None, rules=None, path: str = "rules") -> FilterOutcome:
    return FilterOutcome()
