"""Errors raised for malformed or impossible input.

Every error names the field it is about with a path such as
``sample.sieves[3].retained_g`` so that the web app can put the message beside
the input box and the command line can print it. The JSON boundary
(:mod:`tamis.api`) turns these into ``{"ok": false, "error": {...}}``.
"""

from __future__ import annotations

import math

# --- Limits of the input (docs/json-contract.md "Limits"; docs/decisions.md) ----------------------
# Well-formed numbers far outside anything a laboratory measures are input errors naming their field,
# never a defect of the core: each bound is wide enough for every real test and narrow enough that no
# computation overflows. Common practice, no source: the bounds are ours.

#: Largest magnitude of any number of a request: 10^12 (``out_of_range`` above); smallest magnitude of a
#: number that is not 0: 10^-12 (a 1e-309 % passing would make a regrading factor overflow).
NUMBER_MAX_ABS = 1e12
NUMBER_MIN_ABS = 1e-12
#: Sieve openings and particle sizes [mm]: above 0.0001 mm (0.1 um) and at most 10,000 mm (10 m: riprap and
#: rockfill gradations reach 2 m).
OPENING_MIN_MM = 1e-4
OPENING_MAX_MM = 10_000.0
#: Masses [g]: at most 10^8 g (100 t).
MASS_MAX_G = 1e8
#: Points of one curve (sieves, passing points, D-values, hydrometer readings, band limits, calibration pairs).
POINTS_MAX = 10_000
#: Zones of a zone sequence and base soils of a designed band.
ZONES_MAX = 20
#: Characters of a sieve designation; of a name or other text field.
LABEL_MAX_CHARS = 40
TEXT_MAX_CHARS = 1_000


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


def require_list(value, path: str, *, min_len: int = 0, max_len: int = POINTS_MAX) -> list:
    if not isinstance(value, list):
        raise InputError("not_a_list", f"{path} must be a list.", path)
    if len(value) < min_len:
        raise InputError("too_few_items", f"{path} needs at least {min_len} entries.", path)
    if len(value) > max_len:
        raise InputError("too_many_items", f"{path} has {len(value):,} entries; at most {max_len:,} are accepted.",
                         path)
    return value


def opening(obj: dict, key: str, path: str, *, required: bool = True, default: float | None = None) -> float | None:
    """A sieve opening or particle size [mm]: ``OPENING_MIN_MM`` < v <= ``OPENING_MAX_MM``."""
    v = number(obj, key, path, required=required, default=default, exclusive_minimum=0.0, maximum=OPENING_MAX_MM)
    if v is not None and v <= OPENING_MIN_MM:
        p = join(path, key)
        raise InputError("out_of_range", f"{p} must be larger than {OPENING_MIN_MM:g} mm (0.1 um), got {v:g} mm.", p)
    return v


def check_text_length(value: str, path: str, limit: int = TEXT_MAX_CHARS) -> str:
    if len(value) > limit:
        raise InputError("too_long", f"{path} has {len(value):,} characters; at most {limit:,} are accepted.", path)
    return value


def number(obj: dict, key: str, path: str, *, required: bool = True, minimum: float | None = None,
           exclusive_minimum: float | None = None, maximum: float | None = None,
           default: float | None = None) -> float | None:
    """Read a finite number ``obj[key]``; raise :class:`InputError` naming ``path.key``.

    Booleans and numeric strings are refused: a field that should hold a
    number must hold a JSON number.
    """
    v = obj.get(key) if type(obj) is dict else None
    if type(v) is int and -NUMBER_MAX_ABS <= v <= NUMBER_MAX_ABS:
        v = float(v)
    if type(v) is float and (NUMBER_MIN_ABS <= v <= NUMBER_MAX_ABS or -NUMBER_MAX_ABS <= v <= -NUMBER_MIN_ABS
                             or v == 0.0) \
            and (minimum is None or v >= minimum) and (exclusive_minimum is None or v > exclusive_minimum) \
            and (maximum is None or v <= maximum):
        # the usual case, a finite float within every bound, decided without building the field path; any other
        # value takes the checks below, which give every error with its path
        return v
    if v is None and not required and type(obj) is dict:
        return default                      # absent or null, and optional
    p = join(path, key)
    if key not in obj or obj[key] is None:
        if required:
            raise InputError("missing_field", f"{p} is required.", p)
        return default
    v = obj[key]
    if isinstance(v, bool) or not isinstance(v, (int, float)):
        shown = repr(v) if not isinstance(v, (str, list, dict)) or len(v) <= 40 else f"of length {len(v):,}"
        raise InputError("not_a_number", f"{p} must be a number, got {type(v).__name__} {shown}.", p)
    if isinstance(v, int) and not -NUMBER_MAX_ABS <= v <= NUMBER_MAX_ABS:
        raise InputError("out_of_range", f"{p} is too large: at most {NUMBER_MAX_ABS:g} in magnitude.", p)
    v = float(v)
    if not math.isfinite(v):
        raise InputError("not_finite", f"{p} must be a finite number.", p)
    if abs(v) > NUMBER_MAX_ABS:
        raise InputError("out_of_range", f"{p} is too large: at most {NUMBER_MAX_ABS:g} in magnitude, got {v:g}.", p)
    if 0.0 < abs(v) < NUMBER_MIN_ABS:
        raise InputError("out_of_range", f"{p} is too small: give 0 or a number of at least {NUMBER_MIN_ABS:g} in "
                         f"magnitude, got {v:g}.", p)
    if minimum is not None and v < minimum:
        raise InputError("out_of_range", f"{p} must be at least {minimum:g}, got {v:g}.", p)
    if exclusive_minimum is not None and v <= exclusive_minimum:
        raise InputError("out_of_range", f"{p} must be greater than {exclusive_minimum:g}, got {v:g}.", p)
    if maximum is not None and v > maximum:
        raise InputError("out_of_range", f"{p} must be at most {maximum:g}, got {v:g}.", p)
    return v


def text(obj: dict, key: str, path: str, *, required: bool = False, default: str | None = None,
         choices: tuple[str, ...] | None = None, max_chars: int = TEXT_MAX_CHARS) -> str | None:
    if key not in obj or obj[key] is None:
        if required:
            p = join(path, key)
            raise InputError("missing_field", f"{p} is required.", p)
        return default
    v = obj[key]
    if not isinstance(v, str):
        p = join(path, key)
        raise InputError("not_a_string", f"{p} must be text.", p)
    if len(v) > max_chars or (choices is not None and v not in choices):     # the path is built for errors only
        p = join(path, key)
        check_text_length(v, p, max_chars)
        raise InputError("unknown_choice", f"{p} must be one of {', '.join(choices)}; got {v[:40]!r}.", p)
    return v


def boolean(obj: dict, key: str, path: str, *, default: bool | None = None) -> bool | None:
    if key not in obj or obj[key] is None:
        return default
    v = obj[key]
    if not isinstance(v, bool):
        p = join(path, key)
        raise InputError("not_a_boolean", f"{p} must be true or false.", p)
    return v
