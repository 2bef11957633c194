"""The layout of the CSV exchange file: its columns, its cell spelling of numbers and texts.

``docs/csv.md`` describes the format; :mod:`~tamis.exchange.csv_write` writes
it and :mod:`~tamis.exchange.csv_read` reads it, both from the names here.

Numbers in the typed columns are finite floats: a JSON number ``12`` is read
back as ``12.0``, the same number (JSON and JavaScript do not tell them apart).
Everything else round-trips exactly.

References
----------
- RFC 4180 (IETF, Oct 2005), section 2: CRLF line ends, optional header,
  fields with comma, quote or line break enclosed in double quotes, an
  embedded quote doubled.
- OWASP, "CSV Injection" (www-community attack page, 2025 revision): cells
  that start with ``=``, ``+``, ``-``, ``@``, tab, carriage return or line
  feed are read as formulas by spreadsheets; prefix them with a single quote.
"""

from __future__ import annotations

import re

from .record import META_NUM, PLASTICITY_NUM, TEST_NUM

#: Version of the CSV layout, written in the first column of every row.
CSV_VERSION = "1"
MARKER = "tamis_csv"

FIXED_COLUMNS = (MARKER, "record_id", "kind", "rev", "updated_at", "updated_by", "deleted", "exported_at")
META_COLUMNS = ("sample_id", "project", "material", "zone", "source", "sampling_point", "station",
                "offset_m", "elevation_m", "latitude", "longitude", "lift", "sampled_at", "tested_by",
                "notes", "band_id", "base_id", "retest_of", "rules_json", "meta_extra_json")
TEST_HEAD = TEST_NUM
TEST_TAIL = ("nonplastic", "liquid_limit", "plasticity_index", "dispersive", "test_extra_json")
CALC_COLUMNS = ("calc_d10_mm", "calc_d15_mm", "calc_d60_mm", "calc_d85_mm", "calc_cu", "calc_fines_pct",
                "calc_verdict", "calc_reasons", "calc_advisory", "calc_failing_checks", "calc_note",
                "calc_core_version")
#: Calc columns written beside a metadata column (the name beside the id), ignored on reading like the others.
CALC_BESIDE = {"band_id": "calc_band_name", "base_id": "calc_base_name"}
#: The calc column family of the percent passing at each opening, written beside the masses.
CALC_FAMILY = "calc_passing_pct"
CALC_FAMILY_RE = re.compile(r"calc_passing_pct@([0-9.eE+-]+)mm", re.ASCII)
REQUIRED_COLUMNS = FIXED_COLUMNS + ("history_json",)

#: Families of columns that carry one opening [mm] in their name.
FAMILIES = ("retained_g", "passing_pct", "band_min_pct", "band_max_pct")
FAMILY_RE = re.compile(r"(retained_g|passing_pct|band_min_pct|band_max_pct)@([0-9.eE+-]+)mm", re.ASCII)

#: Every column whose name holds no opening.
STATIC_COLUMNS = frozenset(FIXED_COLUMNS + META_COLUMNS + TEST_HEAD + TEST_TAIL + CALC_COLUMNS
                           + tuple(CALC_BESIDE.values()) + ("band_name", "band_extra_json", "history_json"))

#: Columns that hold a number (besides every ``<family>@<d>mm`` column): the decimal-comma variant
#: writes their decimal mark as a comma.
NUMBER_COLUMNS = frozenset(META_NUM + TEST_NUM + PLASTICITY_NUM + ("calc_d10_mm", "calc_d15_mm", "calc_d60_mm",
                                                                  "calc_d85_mm", "calc_cu", "calc_fines_pct"))


def is_calc_column(col: str) -> bool:
    """A column written for people and never read as data (``calc_*``)."""
    return col.startswith("calc_")


def is_number_column(col: str) -> bool:
    return col in NUMBER_COLUMNS or "@" in col


#: The two spellings of the file (docs/csv.md "Two variants"): separator and decimal mark.
DIALECTS = {"standard": (",", "."), "decimal_comma": (";", ",")}

#: First characters that make a spreadsheet read a cell as a formula (OWASP),
#: plus the escape character itself so that every text round-trips exactly, plus the
#: full-width and look-alike forms of = + - @ (some spreadsheets fold them to ASCII
#: before deciding; common practice, no source): U+FF1D, U+FF0B, U+FF0D, U+FF20,
#: U+2212 minus sign, U+FE62 small plus, U+FE63 small hyphen-minus, U+FE66 small
#: equals, U+FE6B small commercial at.
TRIGGERS = frozenset("=+-@\t\r\n'\uff1d\uff0b\uff0d\uff20\u2212\ufe62\ufe63\ufe66\ufe6b")

NUM_RE = re.compile(r"[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?", re.ASCII)  # used with fullmatch


def fmt_num(v) -> str:
    """Shortest text that reads back as the same float (``repr``, without a trailing ``.0``)."""
    r = repr(float(v))
    return r[:-2] if r.endswith(".0") else r


def escape_text(s: str) -> str:
    """Neutralise a text cell: prefix ``'`` when it is empty or starts with a formula
    trigger or with ``'`` itself (OWASP CSV injection guidance). :func:`unescape_text`
    undoes it exactly."""
    if not s or s[0] in TRIGGERS:
        return "'" + s
    return s


def unescape_text(cell: str) -> str:
    return cell[1:] if cell[:1] == "'" else cell
