// The tester's name: asked once, the first time a record is saved on this
// device, and kept in the settings (changed later under Settings).
import { h, field } from "./dom.js";
import { saveSetting } from "../storage/settings.js";

/**
 * Resolves with the tester's name: the one kept, or the one typed now in a
 * box shown after `anchor` (an empty answer saves without a name, and is
 * asked again next time).
 */
export function askTester(app, anchor) {
  if (app.settings.tester) return Promise.resolve(app.settings.tester);
  document.querySelector(".tester-ask")?.remove();
  return new Promise((resolve) => {
    const f = field("Your name or initials", h("input", { type: "text", autocomplete: "name", enterkeyhint: "done" }),
      { hint: "Recorded with each save; asked only this once (change it under Settings)." });
    const done = async () => {
      const name = f.input.value.trim();
      if (name) { app.settings.tester = name; await saveSetting("tester", name); }
      box.remove();
      resolve(name);
    };
    f.input.addEventListener("keydown", (ev) => { if (ev.key === "Enter") { ev.preventDefault(); done(); } });
    const box = h("section", { class: "card tester-ask", "aria-label": "Who is saving" },
      f.wrap, h("button", { type: "button", class: "btn primary", text: "Save with this name", onclick: done }));
    anchor.insertAdjacentElement("afterend", box);
    f.input.focus();
  });
}
