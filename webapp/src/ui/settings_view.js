// Screen "Settings": size-axis direction, theme, tester name, default criteria.
import { h, fill, field, announce } from "./dom.js";
import { saveSetting } from "../storage/settings.js";
import { RULE_SETS } from "./presets.js";

export function applyTheme(theme) {
  document.documentElement.dataset.theme = theme === "sunlight" ? "sunlight" : "standard";
}

export function settingsScreen(app, view) {
  const s = app.settings;
  const choice = (label, key, options) => {
    const sel = h("select", {}, options.map(([v, t]) => h("option", { value: v, text: t, selected: s[key] === v })));
    sel.addEventListener("change", async () => {
      s[key] = sel.value;
      await saveSetting(key, sel.value);
      if (key === "theme") applyTheme(sel.value);
      announce("Setting saved.");
    });
    return field(label, sel).wrap;
  };
  const tester = field("Your name or initials (recorded with each save)", h("input", { type: "text", autocomplete: "name", value: s.tester }));
  // Kept at every keystroke (a page closed before the field is left keeps
  // the name); announced once, when the field is left.
  tester.input.addEventListener("input", () => {
    s.tester = tester.input.value.trim();
    saveSetting("tester", s.tester).catch(() => announce("The name could not be kept on this device."));
  });
  tester.input.addEventListener("change", async () => {
    s.tester = tester.input.value.trim();
    await saveSetting("tester", s.tester);
    announce("Setting saved.");
  });
  fill(view, h("div", { class: "screen" },
    h("h1", { text: "Settings" }),
    h("section", { class: "card" },
      tester.wrap,
      choice("Size axis of the chart", "axis", [["coarse-left", "Coarse sizes on the left"], ["fine-left", "Fine sizes on the left"]]),
      choice("Theme", "theme", [["standard", "Standard"], ["sunlight", "Sunlight (highest contrast)"]]),
      choice("Default filter criteria for new tests", "rules", RULE_SETS.map((r) => [r.id, r.name]))),
    h("section", { class: "card" }, h("h2", { text: "About" }),
      h("p", { text: `Python core ${app.coreVersion || "starting…"}. Every figure and verdict in this app is computed by that core; the screens only show them.` }),
      h("p", { text: app.persistence === "persisted" ? "The browser keeps this app's data under storage pressure." : "The browser may clear this app's data when space runs low: export often." }))));
}
