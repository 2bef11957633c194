"""Small helpers shared by the criteria modules: building a registered check."""

from __future__ import annotations

from ..findings import FAIL, NEEDS_DATA, PASS, Check, compare
from .registry import source_text


def make_check(check_id: str, status: str, message: str, *, variant: str = "", value=None, limit=None,
               relation=None, unit: str = "", extra: dict | None = None, advisory: bool = False) -> Check:
    """A :class:`~tamis.findings.Check` whose ``source`` comes from the registry."""
    return Check(id=check_id, status=status, message=message, value=value, limit=limit, relation=relation,
                 unit=unit, source=source_text(check_id, variant), extra=dict(extra or {}), advisory=advisory)


def limit_check(check_id: str, value, relation: str, limit, unit: str, what: str, *, variant: str = "",
                extra: dict | None = None, missing: str = "") -> Check:
    """Compare ``value relation limit`` on unrounded numbers; ``needs_data`` when either is None."""
    if value is None or limit is None:
        return make_check(check_id, NEEDS_DATA, missing or f"{what}: not enough data to decide.",
                          variant=variant, value=value, limit=limit, relation=relation, unit=unit, extra=extra)
    ok = compare(value, relation, limit)
    msg = f"{what}: {value:.4g} {unit} {'meets' if ok else 'breaks'} the limit {relation} {limit:.4g} {unit}."
    return make_check(check_id, PASS if ok else FAIL, msg, variant=variant, value=value, limit=limit,
                      relation=relation, unit=unit, extra=extra)
