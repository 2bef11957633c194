// What keeps a record form from losing anything (docs/records.md, "Saving in
// the app"): its draft (per tab and per record, written on every edit and
// flushed when the page is hidden or left), the revision it started from (a
// save is refused when the stored record moved on, and the two versions are
// shown to choose from), and word from the other tabs that have it open.
import { h, fill, announce } from "./dom.js";
import { showConflict } from "./conflict.js";
import { fieldWords } from "./records_view.js";
import { watchRecord } from "./tabs.js";
import { getRecord, saveRecord, sameContent } from "../storage/records.js";
import { loadDraft, saveDraft, clearDraft, draftKey, forgetSessionDraft, tabId, trackDraft } from "../storage/drafts.js";

/**
 * The record a form opens with: this tab's draft of it if any (else a closed
 * tab's), else `seed`, else the stored record, else `blank()`.
 * Returns {name, rec, base, note}: `rec.rev` is the revision the form started
 * from (0 for a new record), `base` the content it started from.
 */
export async function openForm({ stored = null, seed = null, blank }) {
  const name = stored ? `edit:${stored.record_id}` : "new";
  const draft = await loadDraft(name);
  const dRec = draft?.record;
  if (seed) return { name, rec: seed, base: null, note: "" };
  if (stored) {
    if (dRec && dRec.record_id === stored.record_id) {
      const base = draft.base || (dRec.rev === stored.rev ? structuredClone(stored) : null);
      const note = dRec.rev === stored.rev ? "" : `Revision ${stored.rev} was saved after this form was started from revision ${dRec.rev}; saving will show both versions.`;
      return { name, rec: dRec, base, note };
    }
    return { name, rec: structuredClone(stored), base: structuredClone(stored), note: "" };
  }
  if (dRec && dRec.rev === 0) {
    // A saved id is never reused for a new test: a draft whose record was
    // saved with this very content is what that save left behind.
    const already = await getRecord(dRec.record_id);
    if (!already || !sameContent(already, dRec)) return { name, rec: dRec, base: null, note: "" };
  }
  return { name, rec: blank(), base: null, note: "" };
}

const words = (fields, rec) => [...new Set(fields.map((f) => fieldWords(f, rec) || f))].join(", ");

/**
 * Keep a form. opts: name, rec and base (from openForm), read() -> the form's
 * record now, noticeBox and conflictBox (elements of the screen), by,
 * reopen(record) (show a record's form again), done(saved, changed) (after
 * a save went through). Returns {draft(), save(record, summary), close()}.
 */
export function keepForm(app, { name, rec, base, note = "", read, noticeBox, conflictBox, done, reopen }) {
  let basis = rec.rev;
  let saving = false;
  let closed = false;
  const tab = tabId();
  const lines = { peers: "", saved: "", note };
  const show = () => {
    const text = [lines.note, lines.peers, lines.saved].filter(Boolean);
    fill(noticeBox, text.map((t) => h("span", { text: `${t} ` })));
    noticeBox.hidden = text.length === 0;
  };
  show();
  let watcher = null;
  tab.then((t) => {
    if (closed) return;
    watcher = watchRecord(rec.record_id, t, {
      onPeers(n) {
        lines.peers = n ? "This test is also open in another tab: a save there shows here, and saving here after it shows both versions." : "";
        show();
      },
      onSaved(m) {
        const what = m.fields?.length ? ` (${words(m.fields, rec)})` : "";
        lines.saved = `Revision ${m.rev} was saved in another tab${m.by ? ` by ${m.by}` : ""}${what}; saving here will show both versions to choose from.`;
        show();
        announce(lines.saved);
      },
    });
  });
  const current = () => ({ record: read(), base });
  const untrack = trackDraft(name, () => (saving || closed ? null : current()));
  const leaving = () => { closed = true; untrack(); watcher?.close(); };
  app.leaving?.push(leaving);

  async function save(record, summary, basisRev = basis) {
    saving = true;
    const hashBefore = location.hash;
    forgetSessionDraft(name); // the IndexedDB copy goes in the save's own transaction
    let res;
    try {
      res = await saveRecord(record, { by: app.settings.tester || "", summary, basisRev, draftKey: draftKey(name) });
    } catch (err) {
      saving = false;
      saveDraft(name, { record, base }).catch(() => {});
      throw err;
    }
    saving = false;
    if (res.conflict) {
      saveDraft(name, { record, base }).catch(() => {});
      const stored = res.stored;
      const isNew = basisRev === 0;
      const again = (r, why) => save(r, why, stored.rev);
      showConflict(conflictBox, { saved: stored, mine: record, base, isNew }, {
        keepSaved: async () => { await clearDraft(name); leaving(); reopen(stored, isNew); },
        keepMine: () => again(record, `kept this version over revision ${stored.rev}`),
        merge: (merged) => again(merged, `merged with revision ${stored.rev}`),
        separate: () => save({ ...record, record_id: crypto.randomUUID(), rev: 0 }, "created", 0),
      });
      const msg = `Not saved: revision ${stored.rev} was saved meanwhile. Choose below what to keep.`;
      announce(msg);
      return { conflict: true, message: msg };
    }
    const saved = res.record;
    const resolved = !conflictBox.hidden;
    fill(conflictBox);
    conflictBox.hidden = true;
    basis = saved.rev;
    base = structuredClone(saved);
    if (res.changed) watcher?.saved(saved, (saved.history.at(-1)?.changes || []).map((c) => c.field));
    lines.saved = ""; lines.note = "";
    show();
    await done(saved, res.changed);
    if (resolved && location.hash === hashBefore) { leaving(); reopen(saved, false); }
    return { record: saved, changed: res.changed };
  }

  return {
    /** Write the draft now (sessionStorage at once, IndexedDB without waiting). */
    draft() { if (!saving && !closed) saveDraft(name, current()).catch(() => {}); },
    save,
    get basis() { return basis; },
    close: leaving,
  };
}
