"""Checks and findings: the plain data every verdict is made of.

A :class:`Check` is one rule applied to one material (``filter.retention``,
``qa.mass_balance``...). A :class:`Finding` is a remark that is not a rule
outcome: a warning that an input lies outside a method's stated range, or a
note. Both serialise to the dicts of the JSON contract (see
``docs/json-contract.md``).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Iterable

PASS = "pass"
FAIL = "fail"
WARN = "warn"
NOT_APPLICABLE = "not_applicable"
NEEDS_DATA = "needs_data"
STATUSES = (PASS, FAIL, WARN, NOT_APPLICABLE, NEEDS_DATA)

ACCEPT = "accept"
REJECT = "reject"
REVIEW = "review"


@dataclass(frozen=True)
class Check:
    """The outcome of one rule.

    ``value`` and ``limit`` are unrounded; the UI rounds for display only, so a
    comparison is never decided by a rounded figure.
    """

    id: str
    status: str
    message: str
    value: float | None = None
    limit: float | None = None
    relation: str | None = None
    unit: str = ""
    source: str = ""
    extra: dict = field(default_factory=dict)
    #: An indicator reported beside the verdict but not deciding it (internal-
    #: stability methods, permeability estimates); see docs/decisions.md.
    advisory: bool = False

    def __post_init__(self) -> None:
        if self.status not in STATUSES:
            raise ValueError(f"unknown check status {self.status!r}")

    def to_dict(self) -> dict:
        """The check as a dict of the JSON contract. ``value`` and ``limit`` are given as floats; a NaN or
        infinity is kept, not turned into a silent null: the JSON boundary (``tamis.api``) replaces it by null
        with a ``not_computable`` warning naming the check, as the contract requires (no test or fuzzed
        request produces one: the input limits prevent it)."""
        value, limit = self.value, self.limit
        d = {
            "id": self.id,
            "status": self.status,
            "value": None if value is None else float(value),
            "limit": None if limit is None else float(limit),
            "relation": self.relation,
            "unit": self.unit,
            "source": self.source,
            "message": self.message,
            "advisory": self.advisory,
        }
        for k, v in self.extra.items():
            d.setdefault(k, v)
        return d


def new_check(id: str, status: str, message: str, value: float | None = None, limit: float | None = None,
              relation: str | None = None, unit: str = "", source: str = "", extra: dict | None = None,
              advisory: bool = False) -> Check:
    """``Check(id, status, ...)``, the same instance, made without the frozen dataclass's ``object.__setattr__``
    per field (about 3 times faster on CPython 3.11; every check of the criteria is made here through
    :func:`tamis.registry.make_check`). The status is validated as ``Check.__post_init__`` does."""
    if status not in STATUSES:
        raise ValueError(f"unknown check status {status!r}")
    c = object.__new__(Check)
    d = c.__dict__
    d["id"] = id
    d["status"] = status
    d["message"] = message
    d["value"] = value
    d["limit"] = limit
    d["relation"] = relation
    d["unit"] = unit
    d["source"] = source
    d["extra"] = {} if extra is None else extra
    d["advisory"] = advisory
    return c


def copy_check(c: Check, **changes) -> Check:
    """``dataclasses.replace(c, **changes)`` for changes that need no validation (``advisory``, ``extra``):
    the copy is made without calling ``__init__`` again, since ``c``'s fields were validated when it was made."""
    if "status" in changes:
        raise ValueError("copy_check does not change a status (it would not be validated)")
    t = object.__new__(Check)
    t.__dict__.update(c.__dict__, **changes)
    return t


@dataclass(frozen=True)
class Finding:
    """A warning or a note attached to a result (never a rule outcome)."""

    level: str  # "warning" | "note"
    code: str
    message: str
    field: str = ""
    source: str = ""

    def to_dict(self) -> dict:
        return {"level": self.level, "code": self.code, "message": self.message,
                "field": self.field, "source": self.source}


def compare(value: float, relation: str, limit: float) -> bool:
    """True when ``value relation limit`` holds, on unrounded numbers."""
    if relation == "<=":
        return value <= limit
    if relation == "<":
        return value < limit
    if relation == ">=":
        return value >= limit
    if relation == ">":
        return value > limit
    raise ValueError(f"unknown relation {relation!r}")


def verdict(checks: Iterable[Check]) -> str:
    """``reject`` if any check fails, ``review`` if any warns or lacks data,
    else ``accept``. Checks that do not apply are ignored, and so are advisory
    checks (indicators reported beside the verdict); with no applicable check
    at all the verdict is ``review`` (nothing was shown to pass)."""
    statuses = [c.status for c in checks if not c.advisory]
    if FAIL in statuses:
        return REJECT
    if WARN in statuses or NEEDS_DATA in statuses:
        return REVIEW
    if PASS in statuses:
        return ACCEPT
    return REVIEW
