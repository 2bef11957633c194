"""Merging versions of records: which version of a record id wins, or that two conflict.

:func:`merge_versions` decides for one record id; the same rule serves
``records_import_csv`` (a device's records against a file,
:func:`import_records`) and ``records_merge`` (many files, :func:`merge_all`).
"""

from __future__ import annotations

from .record import CONTENT_KEYS, acyclic_work, content_key, dump_json, floats_only, row_order


def _head_mark(rec: dict) -> tuple:
    """Identity of a record's current revision: its history entry for ``rev``,
    else ``(rev, updated_at, updated_by)``."""
    for h in rec["history"]:
        if h["rev"] == rec["rev"]:
            return (h["rev"], h["at"], h["by"])
    return (rec["rev"], rec["updated_at"], rec["updated_by"])


def descends(a: dict, b: dict) -> bool:
    """True when revision ``a`` was made from revision ``b``: ``a`` has the higher
    rev and its history holds ``b``'s head entry (same rev, time and author)."""
    if a["rev"] <= b["rev"]:
        return False
    mark = _head_mark(b)
    return any((h["rev"], h["at"], h["by"]) == mark for h in a["history"])


def merge_history(*histories) -> list:
    """Union of history entries (an entry once, whatever the key order or int/float
    spelling of its numbers: the spelling that is the smallest text is kept),
    ordered by rev, time, content.

    When the longest history is in order (rev, time strictly increasing) and
    every other is spelled as its first entries (copies of one history, or
    older revisions' histories), that longest history is the union as it is."""
    longest = max(histories, key=len) if histories else None  # the first of the longest
    if longest is not None and _ordered(longest):
        starts = {}  # length -> text of that many first entries of ``longest``
        for h in histories:
            if h is longest:
                continue
            n = len(h)
            if n not in starts:
                starts[n] = dump_json(longest[:n])
            if dump_json(h) != starts[n]:
                break
        else:
            return list(longest)
    best = {}  # canonical text -> (spelled text, entry)
    for hist in histories:
        for h in hist:
            spelled = dump_json(h)
            canon = dump_json(floats_only(h))
            prev = best.get(canon)
            if prev is None or spelled < prev[0]:
                best[canon] = (spelled, h)
    return [best[c][1] for c in sorted(best, key=lambda c: (best[c][1]["rev"], best[c][1]["at"], c))]


def _ordered(hist: list) -> bool:
    """Entries strictly increasing by (rev, time), so no two can be the same entry."""
    return all((a["rev"], a["at"]) < (b["rev"], b["at"]) for a, b in zip(hist, hist[1:]))


def _latest(values):
    vals = [v for v in values if v is not None]
    return max(vals) if vals else None


def _content_groups(versions: list[dict]) -> dict:
    """Versions of one id grouped by content: ``{sort key: [versions]}``, each
    group's first version the one of smallest spelling. Versions are first
    bucketed by rev, time, author, deleted and kind (equal content has them
    equal); only a bucket of several is spelled out and, when the spellings
    differ, compared canonically (:func:`~tamis.exchange.record.content_key`).
    The keys and the first versions are the same whatever the order of ``versions``."""
    buckets = {}
    for v in versions:
        buckets.setdefault((v["rev"], v["updated_at"], v["updated_by"], v["deleted"], v["kind"]), []).append(v)
    groups = {}
    for pre, vs in buckets.items():
        if len(vs) == 1:
            groups[(pre, "")] = vs
            continue
        spelled = {}
        for v in vs:
            spelled.setdefault(dump_json({k: v[k] for k in CONTENT_KEYS}), []).append(v)
        canon = {}
        for text in sorted(spelled):
            canon.setdefault(content_key(spelled[text][0]) if len(spelled) > 1 else "", []).extend(spelled[text])
        for ck, group in canon.items():
            groups[(pre, ck)] = group
    return groups


def merge_versions(versions: list[dict]) -> tuple[dict, list[dict]]:
    """Merge every known version of ONE record id; the answer does not depend on
    the order of ``versions``.

    One record object given twice is one version. Versions with the same
    content are one version (histories united, ``exported_at`` the latest; the
    spelling that is the smallest text kept). A version that another one descends from (:func:`descends`) is superseded, its
    history kept in the winner. If one version remains it wins. If several
    remain, they are in conflict: the one with the highest (rev, updated_at,
    content) is kept and each other one is returned as a conflicting version, so
    nothing is lost.

    Returns
    -------
    (kept, others) : the record to keep, and the versions that conflict with it.
    """
    versions = list({id(v): v for v in versions}.values())  # one record object read twice is one version
    if len(versions) == 1:
        return versions[0], []
    merged = {}
    for key, vs in _content_groups(versions).items():
        rep = dict(vs[0])
        rep["history"] = merge_history(*(v["history"] for v in vs))
        rep["exported_at"] = _latest(v["exported_at"] for v in vs)
        merged[key] = rep
    keys = sorted(merged)
    if len(keys) == 1:
        return merged[keys[0]], []
    below = {k: {j for j in keys if j != k and descends(merged[k], merged[j])} for k in keys}
    heads = [k for k in keys if not any(k in below[j] for j in keys)]
    heads.sort(key=lambda k: (merged[k]["rev"], merged[k]["updated_at"], k), reverse=True)
    top = heads[0]
    reach, todo = {top}, [top]
    while todo:
        for j in below[todo.pop()]:
            if j not in reach:
                reach.add(j)
                todo.append(j)
    kept = dict(merged[top])
    kept["history"] = merge_history(*(merged[k]["history"] for k in sorted(reach)))
    return kept, [merged[k] for k in heads[1:]]


def merge_all(record_lists) -> tuple[list[dict], list[dict]]:
    """Merge lists of checked records by id. Returns ``(records, conflicts)``,
    records in row order, conflicts as ``{"record_id", "local", "incoming", "reason"}``
    (``local`` is the version kept) ordered by id."""
    with acyclic_work():
        return _merge_all(record_lists)


def _merge_all(record_lists):
    by_id = {}
    for lst in record_lists:
        for r in lst:
            by_id.setdefault(r["record_id"], []).append(r)
    out, conflicts = [], []
    for rid in sorted(by_id):
        kept, others = merge_versions(by_id[rid])
        out.append(kept)
        for o in others:
            conflicts.append({"record_id": rid, "local": kept, "incoming": o, "reason": _conflict_reason(kept, o)})
    out.sort(key=row_order)
    return out, conflicts


def _conflict_reason(a: dict, b: dict) -> str:
    if a["rev"] == b["rev"]:
        return f"both versions are rev {a['rev']} with different content"
    hi, lo = (a, b) if a["rev"] > b["rev"] else (b, a)
    marks = {h["rev"]: (h["at"], h["by"]) for h in hi["history"]}
    if lo["rev"] in marks:
        return (f"rev {hi['rev']} was not made from this rev {lo['rev']}: both changed since their common "
                "ancestor")
    return f"the history of rev {hi['rev']} does not show that it was made from rev {lo['rev']}"


def resolve_conflict(local: dict, incoming: dict, keep: str, at: str, by: str) -> dict:
    """A new revision that settles a conflict: the content of the version ``keep``
    names (``"local"`` or ``"incoming"``), ``rev`` one above both, and a history
    holding both versions' entries plus one saying what was decided. Because its
    history holds both head entries, it descends from (:func:`descends`) and so
    supersedes both versions wherever they turn up later."""
    chosen, other = (local, incoming) if keep == "local" else (incoming, local)
    rev = max(local["rev"], incoming["rev"]) + 1
    hist = merge_history(local["history"], incoming["history"])
    marks = {(h["rev"], h["at"], h["by"]) for h in hist}
    for v in (local, incoming):
        if _head_mark(v) not in marks:  # a version saved without its history entry: record its mark
            hist.append({"rev": v["rev"], "at": v["updated_at"], "by": v["updated_by"],
                         "summary": "revision known from the record only", "changes": []})
    hist.append({"rev": rev, "at": at, "by": by,
                 "summary": f"conflict resolved: kept rev {chosen['rev']} of {chosen['updated_at']} by "
                            f"{chosen['updated_by']}; set aside rev {other['rev']} of {other['updated_at']} by "
                            f"{other['updated_by']}", "changes": []})
    out = dict(chosen, rev=rev, updated_at=at, updated_by=by, history=merge_history(hist))
    out["exported_at"] = None  # a new revision that has not left this device
    return out


def import_records(incoming: list[dict], existing: list[dict], resolve=None, at=None, by=None) -> dict:
    """Merge a file's records into a device's records (both checked).

    ``added``: ids new to the device; ``updated``: records whose stored form
    changes (a newer revision, or history entries gained); ``unchanged``;
    ``conflicts``: both changed, the device's version kept untouched, unless
    ``resolve`` (record id -> ``"local"`` or ``"incoming"``) settles it with
    :func:`resolve_conflict` at time ``at`` by ``by``: then it is in
    ``updated`` and ``resolved``.
    """
    resolve = resolve or {}
    local = {r["record_id"]: r for r in existing}
    out = dict(local)
    added, updated, unchanged, conflicts, resolved = [], [], [], [], []
    for inc in incoming:
        rid = inc["record_id"]
        loc = local.get(rid)
        if loc is None:
            out[rid] = inc
            added.append(rid)
            continue
        kept, others = merge_versions([loc, inc])
        if others and rid in resolve:
            out[rid] = resolve_conflict(loc, inc, resolve[rid], at, by)
            updated.append(rid)
            resolved.append(rid)
        elif others:
            conflicts.append({"record_id": rid, "local": loc, "incoming": inc,
                              "reason": _conflict_reason(loc, inc)})
        elif kept == loc:
            unchanged.append(rid)
        else:
            out[rid] = kept
            updated.append(rid)
    return {"records": sorted(out.values(), key=row_order), "added": sorted(added), "updated": sorted(updated),
            "unchanged": sorted(unchanged), "conflicts": sorted(conflicts, key=lambda c: c["record_id"]),
            "resolved": sorted(resolved)}
