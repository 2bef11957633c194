"""Errors raised for malformed or impossible input.

Every error names the field it is about with a path such as
``sample.sieves[3].retained_g`` so that the web app can put the message beside
the input box and the command line can print it. The JSON boundary
(:mod:`tamis.api`) turns these into ``{"ok": false, "error": {...}}``.
"""

from __future__ import annotations

import math


class InputError(ValueError):
    """Input that is malformed or physically impossible.

    Parameters
    ----------
    code : str
        Stable machine-readable code, e.g. ``"negative_mass"``.
    message : str
        A sentence for a person, saying what is wrong and what to do.
    field : str
        Path of the offending input, e.g. ``"test.sieves[2].retained_g"``;
        empty when the whole request is at fault.
    """

    def __init__(self, code: str, message: str, field: str = "") -> None:
        super().__init__(message)
        self.code = code
        self.message = message
        self.field = field

    def to_dict(self) -> dict:
        return {"code": self.code, "message": self.message, "field": self.field}


def join(path: str, key: str | int) -> str:
    """Extend a field path: ``join("test", "sieves")`` -> ``"test.sieves"``,
    ``join("test.sieves", 3)`` -> ``"test.sieves[3]"``."""
    if isinstance(key, int):
        return f"{path}[{key}]"
    return f"{path}.{key}" if path else key


def require_mapping(value, path: str) -> dict:
    if not isinstance(value, dict):
        raise InputError("not_an_object", f"{path or 'request'} must be a JSON object.", path)
    return value


def require_list(value, path: str, *, min_len: int = 0) -> list:
    if not isinstance(value, list):
        raise InputError("not_a_list", f"{path} must be a list.", path)
    if len(value) < min_len:
        raise InputError("too_few_items", f"{path} needs at least {min_len} entries.", path)
    return value


def number(obj: dict, key: str, path: str, *, required: bool = True, minimum: float | None = None,
           exclusive_minimum: float | None = None, maximum: float | None = None,
           default: float | None = None) -> float | None:
    """Read a finite number ``obj[key]``; raise :class:`InputError` naming ``path.key``.

    Booleans and numeric strings are refused: a field that should hold a
    number must hold a JSON number.
    """
    p = join(path, key)
    if key not in obj or obj[key] is None:
        if required:
            raise InputError("missing_field", f"{p} is required.", p)
        return default
    v = obj[key]
    if isinstance(v, bool) or not isinstance(v, (int, float)):
        raise InputError("not_a_number", f"{p} must be a number, got {type(v).__name__} {v!r}.", p)
    v = float(v)
    if not math.isfinite(v):
        raise InputError("not_finite", f"{p} must be a finite number.", p)
    if minimum is not None and v < minimum:
        raise InputError("out_of_range", f"{p} must be at least {minimum:g}, got {v:g}.", p)
    if exclusive_minimum is not None and v <= exclusive_minimum:
        raise InputError("out_of_range", f"{p} must be greater than {exclusive_minimum:g}, got {v:g}.", p)
    if maximum is not None and v > maximum:
        raise InputError("out_of_range", f"{p} must be at most {maximum:g}, got {v:g}.", p)
    return v


def text(obj: dict, key: str, path: str, *, required: bool = False, default: str | None = None,
         choices: tuple[str, ...] | None = None) -> str | None:
    p = join(path, key)
    if key not in obj or obj[key] is None:
        if required:
            raise InputError("missing_field", f"{p} is required.", p)
        return default
    v = obj[key]
    if not isinstance(v, str):
        raise InputError("not_a_string", f"{p} must be text.", p)
    if choices is not None and v not in choices:
        raise InputError("unknown_choice", f"{p} must be one of {', '.join(choices)}; got {v!r}.", p)
    return v


def boolean(obj: dict, key: str, path: str, *, default: bool | None = None) -> bool | None:
    p = join(path, key)
    if key not in obj or obj[key] is None:
        return default
    v = obj[key]
    if not isinstance(v, bool):
        raise InputError("not_a_boolean", f"{p} must be true or false.", p)
    return v
