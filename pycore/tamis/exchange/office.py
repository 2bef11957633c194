"""Office commands on CSV exchange files: ``merge``, ``report``, ``check``.

``python -m tamis merge A.csv B.csv ... -o OUT.csv``
    Merge files from several devices by record id and revision
    (:func:`tamis.exchange.merge.merge_all`); rows in a fixed order, so the same files
    in any order give the same bytes. Exit 1 when conflicts remain (the kept
    version is written, every other one is listed with ``--conflicts``).
``python -m tamis report FILE.csv [--json]``
    Recompute every test's verdict with the current core (the code of the
    ``evaluate`` op, :mod:`tamis.exchange.summaries`) and flag the rows whose stored
    verdict differs. Exit 1 when a stored verdict differs.
``python -m tamis report FILE.csv --html OUT.html [--test ID ...] [--lot LOT] [--day YYYY-MM-DD]``
    Write the printable report (:mod:`tamis.exchange.report_html`): one page per
    test (every test, or those named), or the page of a lot or of a day.
``python -m tamis check FILE.csv``
    Validate the file; write nothing.

Every command exits 2 when a file cannot be read, naming the file, the row
(as a spreadsheet numbers it, header = 1) and the column. On long work
(more than :data:`PROGRESS_MIN` records) ``merge`` and ``report`` say how far
they are on standard error (:class:`Progress`); standard output stays the
CSV, the table or the JSON.
"""

from __future__ import annotations

import contextlib
import gc
import json
import multiprocessing
import os
import sys
import tempfile
import time

from .. import SCREENING_NOTICE, __version__
from . import summaries as S
from .csv_format import CSV_VERSION
from .csv_read import decode_csv_bytes, read_csv
from .csv_write import write_csv
from .merge import merge_all
from .record import KINDS, acyclic_work
from ..errors import InputError

EXIT_OK, EXIT_FLAGGED, EXIT_BAD_INPUT = 0, 1, 2

#: Progress is shown only when there are more records than this.
PROGRESS_MIN = 2000
#: Verdicts are recomputed by several processes (``--jobs``) only when there are more records than this.
PARALLEL_MIN = 2000
#: Reading progress is shown only when there are more files than this.
PROGRESS_MIN_FILES = 10
#: At most one progress line per this many seconds (plus the last one).
PROGRESS_EVERY_S = 2.0


class Progress:
    """A ``progress(done, total)`` callback that prints ``<what>: 12,000 of 100,000
    <unit> (12 %)`` to ``stream`` (standard error), at most once every
    ``every_s`` seconds and once when ``done == total``; silent when
    ``total <= min_total``. The percentage is rounded down (100 % only when done).
    """

    def __init__(self, what: str, unit: str, *, stream=None, min_total: int = PROGRESS_MIN,
                 every_s: float = PROGRESS_EVERY_S, clock=time.monotonic) -> None:
        self.what, self.unit, self.stream = what, unit, stream
        self.min_total, self.every_s, self.clock = min_total, every_s, clock
        self.last = clock()

    def __call__(self, done: int, total: int) -> None:
        if total <= self.min_total:
            return
        now = self.clock()
        if done < total and now - self.last < self.every_s:
            return
        self.last = now
        print(f"{self.what}: {done:,} of {total:,} {self.unit} ({100 * done // total} %)",
              file=self.stream or sys.stderr, flush=True)


EPILOGS = {
    "merge": "exit status: 0 merged; 1 conflicts remain (the kept version is written, the others are listed); "
             "2 a file cannot be read.",
    "report": "exit status: 0 done; 1 a stored verdict differs from the recomputed one; 2 the file cannot be read "
              "(or, with --html, nothing matches the selection).",
    "check": "exit status: 0 valid; 2 the file cannot be read (file, row and column are named).",
}


def add_arguments(name: str, parser) -> None:
    parser.epilog = EPILOGS.get(name)
    if name == "merge":
        parser.add_argument("files", nargs="+", help="CSV exchange files to merge")
        parser.add_argument("-o", "--output", required=True, help="merged CSV file to write (- for standard output)")
        parser.add_argument("--conflicts", metavar="FILE",
                            help="write the conflicting versions, in full, to this JSON file")
        parser.add_argument("--bom", action="store_true", help="start the output with a UTF-8 byte order mark")
        parser.add_argument("--decimal-comma", action="store_true",
                            help="write the variant for spreadsheets that use the decimal comma: semicolons "
                                 "between cells, numbers as 12,4 (it reads back as the same records)")
        parser.add_argument("--no-calc", action="store_true",
                            help="leave the calc_* columns blank (faster for very large merges; "
                                 "report recomputes them anyway)")
        _jobs_argument(parser)
    elif name == "report":
        parser.add_argument("file", help="CSV exchange file")
        parser.add_argument("--json", action="store_true", help="print JSON for machines instead of a table")
        _jobs_argument(parser)
        sheet = parser.add_argument_group("printable report (HTML, one page per test; print it or save it as PDF "
                                          "from a browser)")
        sheet.add_argument("--html", metavar="OUT.html", help="write the report to this self-contained HTML file "
                           "(- for standard output) instead of the table")
        pick = sheet.add_mutually_exclusive_group()
        pick.add_argument("--test", action="append", metavar="ID", default=[],
                          help="the test to report, by sample id or record id (repeat for a selection; "
                               "default: every test)")
        pick.add_argument("--lot", help="the lot report: the tests whose lot (meta.lot) is LOT")
        pick.add_argument("--day", metavar="YYYY-MM-DD", help="the daily report: the tests sampled that day (UTC)")
        sheet.add_argument("--paper", choices=("auto", "a4", "letter"), default="auto",
                           help="page size written in the file (default auto: the printer's; both fit)")
    elif name == "check":
        parser.add_argument("file", help="CSV exchange file")
    else:  # pragma: no cover - cli.py only sends the three names above
        raise ValueError(name)


def _jobs_argument(parser) -> None:
    parser.add_argument("--jobs", type=int, default=0, metavar="N",
                        help=f"processes that recompute verdicts when there are more than {PARALLEL_MIN:,} records "
                             "(default 0: one per processor; 1: none besides this one); the output is the same")


def available_cpus() -> int:
    try:
        return len(os.sched_getaffinity(0))
    except (AttributeError, OSError):  # not on every system
        return os.cpu_count() or 1


#: What the forked workers of :func:`summaries_in_parallel` read (set before the fork, never changed).
_SHARED: tuple = ()


def _summaries_of_slice(bounds: tuple[int, int]) -> tuple[int, list[dict]]:
    todo, index = _SHARED
    a, b = bounds
    return a, S.compute_summaries(todo[a:b], index)


def summaries_in_parallel(todo: list[dict], index: dict, jobs: int, progress=None) -> list[dict]:
    """:func:`tamis.exchange.summaries.compute_summaries` of ``todo``, the same list, computed by
    ``jobs`` forked processes when that is worth it (more than :data:`PARALLEL_MIN`
    records, ``jobs`` > 1, a system where a process can fork: Linux), else here.
    Each record's summary depends only on it and ``index``, so the answer does not
    depend on how the records are shared out; each process parses each band and
    base soil once for itself."""
    global _SHARED
    jobs = available_cpus() if jobs <= 0 else jobs
    total = len(todo)
    if jobs <= 1 or total <= PARALLEL_MIN or not sys.platform.startswith("linux") \
            or "fork" not in multiprocessing.get_all_start_methods():
        return S.compute_summaries(todo, index, progress)
    step = max(100, total // (jobs * 16))  # small slices: progress moves, and no process waits long at the end
    slices = [(a, min(a + step, total)) for a in range(0, total, step)]
    out: list = [None] * total
    done = 0
    _SHARED = (todo, index)
    try:
        with multiprocessing.get_context("fork").Pool(jobs) as pool:
            for a, part in pool.imap_unordered(_summaries_of_slice, slices):
                out[a:a + len(part)] = part
                done += len(part)
                if progress is not None:
                    progress(done, total)
    finally:
        _SHARED = ()
    return out


def calc_cells(records: list[dict], jobs: int, progress=None) -> dict:
    """:func:`tamis.exchange.summaries.summaries_for` of ``records`` (no context), computed by
    :func:`summaries_in_parallel`."""
    index = {r["record_id"]: r for r in records}
    todo = [r for r in records if r["kind"] != "band"]
    sums = summaries_in_parallel(todo, index, jobs, progress)
    return {r["record_id"]: S.summary_cells(s) for r, s in zip(todo, sums)}


def read_file(path: str, memo: dict | None = None) -> tuple[list[dict], list[dict]]:
    """Read and validate one CSV exchange file: ``(records, rows)``; ``memo`` as in
    :func:`tamis.exchange.csv_read.read_csv` (kept across the files of one merge)."""
    with open(path, "rb") as fh:
        data = fh.read()
    return read_csv(decode_csv_bytes(data), memo=memo)


def describe_error(path: str, err: InputError) -> str:
    """``FILE: Row N, column C: reason`` (the core's messages on a file start with their row)."""
    return f"{path}: {err.message}"


def _fail(path: str, err: InputError) -> int:
    print(f"error: {describe_error(path, err)}", file=sys.stderr)
    return EXIT_BAD_INPUT


def run(name: str, args) -> int:
    return {"merge": _merge, "report": _report, "check": _check}[name](args)


def _load(path: str, memo: dict | None = None):
    """``(records, rows)`` of a file, or the exit status after printing why it cannot be read."""
    try:
        return read_file(path, memo)
    except InputError as err:
        return _fail(path, err)
    except OSError as err:
        why = "is a folder, not a file" if isinstance(err, IsADirectoryError) else (
            "no such file or folder" if isinstance(err, FileNotFoundError) else err.strerror)
        print(f"error: {path}: {why}", file=sys.stderr)
        return EXIT_BAD_INPUT


def _target_problem(path: str) -> str | None:
    """Why ``path`` cannot be written as a file, or None."""
    if os.path.isdir(path):
        return "is a folder, not a file"
    folder = os.path.dirname(path) or "."
    if not os.path.isdir(folder):
        return f"the folder {folder} does not exist" if not os.path.exists(folder) else f"{folder} is not a folder"
    return None


def _new_file_mode(path: str) -> int:
    """The mode an ordinary ``open(path, "w")`` would give: the target's own, or 0o666 less the umask."""
    try:
        return os.stat(path).st_mode & 0o777
    except OSError:
        mask = os.umask(0)
        os.umask(mask)
        return 0o666 & ~mask


def write_all(outputs: list[tuple[str, bytes]]) -> int | None:
    """Write every ``(path, bytes)`` atomically, or none of them when any cannot be written: each goes
    to a temporary file in its own folder first, then replaces the target (``os.replace``), so a
    failed run leaves no half-written file. Returns None, or the exit status after printing why."""
    for path, _ in outputs:
        why = _target_problem(path)
        if why is not None:
            print(f"error: {path}: {why}; nothing was written.", file=sys.stderr)
            return EXIT_BAD_INPUT
    temps: list[tuple[str, str]] = []
    try:
        for path, data in outputs:
            fd, tmp = tempfile.mkstemp(dir=os.path.dirname(path) or ".", prefix=f".{os.path.basename(path)}.",
                                       suffix=".tmp")
            temps.append((tmp, path))
            with os.fdopen(fd, "wb") as fh:
                fh.write(data)
            os.chmod(tmp, _new_file_mode(path))
        for tmp, path in temps:
            os.replace(tmp, path)
    except OSError as err:
        for tmp, _ in temps:
            with contextlib.suppress(OSError):
                os.unlink(tmp)
        name = err.filename or (temps[-1][1] if temps else "output")
        print(f"error: {name}: {err.strerror or type(err).__name__}; the output was not written.", file=sys.stderr)
        return EXIT_BAD_INPUT
    return None


def _check(args) -> int:
    loaded = _load(args.file)
    if isinstance(loaded, int):
        return loaded
    recs, rows = loaded
    counts = {k: sum(1 for r in recs if r["kind"] == k) for k in KINDS}
    deleted = sum(1 for r in recs if r["deleted"])
    print(f"{args.file}: valid tamis CSV version {CSV_VERSION}, {len(recs)} records "
          f"({counts['test']} tests, {counts['band']} bands, {counts['base']} base soils"
          + (f", {counts['lot']} lots" if counts["lot"] else "") + f"; {deleted} deleted).")
    return EXIT_OK


def _merge(args) -> int:
    for path in ([] if args.output == "-" else [args.output]) + ([args.conflicts] if args.conflicts else []):
        why = _target_problem(path)
        if why is not None:  # said before the (possibly long) work, and again by write_all
            print(f"error: {path}: {why}; nothing was written.", file=sys.stderr)
            return EXIT_BAD_INPUT
    lists, memo = [], {}
    reading = Progress("read", "files", min_total=PROGRESS_MIN_FILES)
    with acyclic_work():  # one pause over all files and the merge: the collector would walk every record
        for i, path in enumerate(args.files, 1):
            loaded = _load(path, memo)
            if isinstance(loaded, int):
                return loaded
            lists.append(loaded[0])
            reading(i, len(args.files))
        merged, conflicts = merge_all(lists)
        gc.freeze()  # the records live to the end of the command: the collector need never walk them again
    # ops.export_csv(merged), with the progress of the calc columns shown
    calc = None if args.no_calc else calc_cells(merged, args.jobs, Progress("calc columns", "records"))
    text = write_csv(merged, calc, bom=args.bom, dialect="decimal_comma" if args.decimal_comma else "standard")
    outputs = [] if args.output == "-" else [(args.output, text.encode("utf-8"))]
    if args.conflicts:
        outputs.append((args.conflicts, (json.dumps({"conflicts": conflicts}, ensure_ascii=False, indent=1,
                                                    allow_nan=False) + "\n").encode("utf-8")))
    failed = write_all(outputs)
    if failed is not None:
        return failed
    if args.output == "-":
        sys.stdout.buffer.write(text.encode("utf-8"))
        sys.stdout.buffer.flush()
    total = sum(len(x) for x in lists)
    print(f"merged {total} rows from {len(lists)} files into {len(merged)} records"
          + ("" if args.output == "-" else f" in {args.output}"), file=sys.stderr)
    for c in conflicts:
        kept, other = c["local"], c["incoming"]
        print(f"conflict: {c['record_id']} ({kept['meta'].get('sample_id', kept['kind'])}): kept rev {kept['rev']} "
              f"of {kept['updated_at']} by {kept['updated_by']!r}; not kept rev {other['rev']} of "
              f"{other['updated_at']} by {other['updated_by']!r}: {c['reason']}", file=sys.stderr)
    if conflicts:
        print(f"{len(conflicts)} conflict(s) remain; resolve them on a device and merge again"
              + ("" if args.conflicts else " (--conflicts FILE writes both versions in full)"), file=sys.stderr)
        return EXIT_FLAGGED
    return EXIT_OK


def report_rows(recs: list[dict], rows: list[dict], progress=None, jobs: int = 1) -> list[dict]:
    """One entry per live test record: recomputed summary beside the stored verdict.
    ``progress(done, total)`` follows the tests (:func:`tamis.exchange.summaries.compute_summaries`);
    ``jobs`` as in :func:`summaries_in_parallel`."""
    index = {r["record_id"]: r for r in recs}
    live = [(rec, row) for rec, row in zip(recs, rows) if rec["kind"] == "test" and not rec["deleted"]]
    sums = summaries_in_parallel([rec for rec, _ in live], index, jobs, progress)
    out = []
    for (rec, row), s in zip(live, sums):
        stored = row["calc"].get("calc_verdict")
        out.append({
            "row": row["row"], "record_id": rec["record_id"], "sample_id": rec["meta"].get("sample_id"),
            "d_mm": s["d_mm"], "cu": s["cu"], "fines_pct": s["fines_pct"],
            "verdict": s["verdict"], "failing_checks": s["failing_checks"], "note": s["note"],
            "stored_verdict": stored,
            "differs": stored is not None and stored != s["verdict"],
        })
    return out


def _show(x) -> str:
    """Display rounding only (4 significant digits); the comparisons used unrounded values."""
    return "-" if not isinstance(x, (int, float)) or isinstance(x, bool) else f"{x:.4g}"


def render_table(entries: list[dict]) -> str:
    head = ("row", "sample", "D10 mm", "D15 mm", "D60 mm", "D85 mm", "Cu", "fines %", "stored", "verdict", "")
    lines = []
    for e in entries:
        d = e["d_mm"] or {}
        flag = "DIFFERS" if e["differs"] else ""
        lines.append((str(e["row"]), str(e["sample_id"] or e["record_id"][:8]),
                      *(_show(d.get(k)) for k in ("D10", "D15", "D60", "D85")), _show(e["cu"]),
                      _show(e["fines_pct"]), e["stored_verdict"] or "-", e["verdict"] or "-", flag))
    widths = [max(len(r[i]) for r in [head] + lines) for i in range(len(head))]
    fmt = lambda r: "  ".join(c.ljust(w) for c, w in zip(r, widths)).rstrip()  # noqa: E731
    out = [fmt(head), fmt(tuple("-" * w for w in widths))] + [fmt(r) for r in lines]
    notes = [f"row {e['row']}: {e['note']}" for e in entries if e["note"]]
    notes += [f"row {e['row']}: fails {', '.join(e['failing_checks'])}" for e in entries if e["failing_checks"]]
    return "\n".join(out + ([""] + notes if notes else []))


def summarise(entries: list[dict]) -> dict:
    return {"tests": len(entries),
            "accept": sum(e["verdict"] == "accept" for e in entries),
            "reject": sum(e["verdict"] == "reject" for e in entries),
            "review": sum(e["verdict"] == "review" for e in entries),
            "no_verdict": sum(e["verdict"] is None for e in entries),
            "differs": sum(e["differs"] for e in entries)}


def _report_html(args, recs) -> int:
    from . import report_html
    kind = "lot" if args.lot else "day" if args.day else "test"
    try:
        got = report_html.build(recs, kind=kind, ids=args.test, lot=args.lot, day=args.day, paper=args.paper)
    except InputError as err:
        print(f"error: {args.file}: {err.message}", file=sys.stderr)
        return EXIT_BAD_INPUT
    if kind != "test" and got["count"] == 0:
        print(f"error: {args.file}: no test of {'lot ' + args.lot if args.lot else 'the day ' + args.day}.",
              file=sys.stderr)
        return EXIT_BAD_INPUT
    if args.html == "-":
        sys.stdout.buffer.write(got["html"].encode("utf-8"))
        sys.stdout.buffer.flush()
    else:
        failed = write_all([(args.html, got["html"].encode("utf-8"))])
        if failed is not None:
            return failed
    print(f"wrote {got['title']}" + ("" if kind == "test" else f" ({got['count']} test{'s' if got['count'] != 1 else ''})")
          + ("" if args.html == "-" else f" to {args.html}") + "; open it in a browser to print or save as PDF.",
          file=sys.stderr)
    return EXIT_OK


def _report(args) -> int:
    loaded = _load(args.file)
    if isinstance(loaded, int):
        return loaded
    recs, rows = loaded
    if args.html:
        return _report_html(args, recs)
    if args.test or args.lot or args.day:
        print("error: --test, --lot and --day choose what --html writes; give --html OUT.html", file=sys.stderr)
        return EXIT_BAD_INPUT
    gc.freeze()  # the records live to the end of the command: the collector need never walk them again
    entries = report_rows(recs, rows, Progress("report", "tests"), args.jobs)
    summary = summarise(entries)
    if args.json:
        print(json.dumps({"file": args.file, "core_version": __version__, "summary": summary, "tests": entries,
                          "notice": SCREENING_NOTICE}, ensure_ascii=False, indent=1, allow_nan=False))
    else:
        print(render_table(entries))
        print()
        print(f"{summary['tests']} tests: {summary['accept']} accept, {summary['reject']} reject, "
              f"{summary['review']} review, {summary['no_verdict']} without verdict; recomputed with tamis "
              f"{__version__}; {summary['differs']} stored verdict(s) differ.")
        print(SCREENING_NOTICE)
    return EXIT_FLAGGED if summary["differs"] else EXIT_OK
