// The scenario editor: collects the form as an /api/v1/cycle request (values with the units
// the engineer chose), asks the server for the results and charts, and marks bad fields.
(function () {
  "use strict";
  const form = document.getElementById("scenario");
  const results = document.getElementById("results");
  const status = document.getElementById("status");
  let figures = {};
  let lastBody = null;

  function visible(el) {
    return !el.closest(".option[hidden]");
  }

  function setPath(obj, path, value) {
    const parts = path.split(".");
    let node = obj;
    for (let i = 0; i < parts.length - 1; i++) {
      node[parts[i]] = node[parts[i]] || {};
      node = node[parts[i]];
    }
    node[parts[parts.length - 1]] = value;
  }

  function unitOf(path, suffix) {
    const sel = Array.from(form.querySelectorAll(`[name="${path}@${suffix || "unit"}"]`)).find(visible);
    return sel ? sel.value : "";
  }

  const quantity = window.presscycleEntry.withUnit;

  function lines(text) {
    return text.split(/\r?\n/).map((l) => l.trim()).filter((l) => l && !l.startsWith("#"));
  }

  function pairs(el, path) {
    const u0 = unitOf(path, "unit0"), u1 = unitOf(path, "unit1");
    return lines(el.value).map((l) => {
      const cells = l.split(/[;\t]|,(?=\s)|\s+/).map((c) => c.trim()).filter(Boolean);
      return [quantity(cells[0] || "", u0), quantity(cells[1] || "", u1)];
    });
  }

  // a list ("25, 32, 40"): items apart by ";", whitespace or a comma and a space; with none of
  // those, commas part the items ("25,32,40"), so a decimal comma needs "; " between items
  // A bare comma stays in its number ("32,5" is a decimal comma; the server asks about
  // "19,000"), except in a run like "25,32,40" whose parts cannot be one number.
  function listItems(raw) {
    const parts = raw.split(/;|,(?=\s)|\s+/).map((x) => x.trim()).filter(Boolean);
    return parts.flatMap((x) => {
      const pieces = x.split(",");
      const oneNumber = pieces.length === 2 || pieces.slice(1).every((p) => /^\d{3}(\D|$)/.test(p));
      return oneNumber ? [x] : pieces.filter(Boolean);
    });
  }

  // a field another choice makes redundant (the solids density when the cake's dry bulk density
  // and moisture fix it): shown disabled, not sent
  function unused(el) {
    const rule = el.closest("[data-unused-with]");
    if (!rule) return false;
    const [choice, option] = rule.dataset.unusedWith.split("=");
    const sel = form.querySelector(`[name="${choice}@choice"]`);
    return Boolean(sel) && sel.value === option;
  }
  function markUnused() {
    form.querySelectorAll("[data-unused-with]").forEach((field) => {
      const off = unused(field);
      field.classList.toggle("unused", off);
      field.querySelectorAll("input, select").forEach((i) => { i.disabled = off; });
    });
  }

  function collect() {
    const body = {};
    form.querySelectorAll("[data-choice]").forEach((c) => {
      const name = c.dataset.choice;
      const value = c.querySelector(`[name="${name}@choice"]`).value;
      if ("sent" in c.dataset) setPath(body, name, value); // the option is itself an input (feed.mode)
    });
    form.querySelectorAll("input[name], textarea[name], select[name]").forEach((el) => {
      const path = el.name;
      if (path.indexOf("@") >= 0 || !visible(el) || el.closest("[data-group=save]") || unused(el)) return;
      const raw = el.value.trim();
      if (raw === "") return;
      const kind = el.dataset.kind || "";
      let value;
      if (kind === "curve" || kind === "steps" || kind === "blowcurve") value = pairs(el, path);
      else if (kind === "order") value = raw.split(",");
      else if (kind === "time_or_pump" && /^pump$/i.test(raw)) value = "pump";
      else if (kind === "list") value = listItems(raw).map((x) => quantity(x, unitOf(path)));
      else if (kind === "count") value = /^\d+$/.test(raw.replace(/[ \u00a0\u2009\u202f]/g, "")) ? Number(raw.replace(/\D/g, "")) : raw;
      else if (el.tagName === "SELECT") value = raw;
      else value = quantity(raw, unitOf(el.dataset.unitOf || path));
      setPath(body, path, value);
    });
    // inputs this form has no field for (the cake's local laws, ...) go back unchanged
    const carriedEl = document.getElementById("carried-inputs");
    if (carriedEl) mergeMissing(body, JSON.parse(carriedEl.textContent));
    return body;
  }

  function mergeMissing(target, extra) {
    Object.entries(extra).forEach(([key, value]) => {
      if (value && typeof value === "object" && !Array.isArray(value)) {
        target[key] = target[key] && typeof target[key] === "object" ? target[key] : {};
        mergeMissing(target[key], value);
      } else if (!(key in target)) {
        target[key] = value;
      }
    });
  }

  // values outside the trade's usual range: calculated, and flagged beside their field
  function showFlags(warnings) {
    form.querySelectorAll(".flag").forEach((e) => { e.hidden = true; e.textContent = ""; });
    (warnings || []).forEach((w) => {
      const field = fieldFor(w.field || "");
      const flag = field && field.querySelector && field.querySelector(".flag");
      if (flag) { flag.textContent = flag.hidden ? w.message : `${flag.textContent} ${w.message}`; flag.hidden = false; }
    });
  }

  function clearErrors() {
    form.querySelectorAll(".error").forEach((e) => { e.hidden = true; e.textContent = ""; });
    form.querySelectorAll("[aria-invalid]").forEach((e) => e.removeAttribute("aria-invalid"));
  }

  function fieldFor(path) {
    let parts = path.split(".").filter((p) => !/^\d+$/.test(p) || true);
    while (parts.length) {
      const p = parts.join(".");
      const field = Array.from(form.querySelectorAll(`.field[data-path="${p}"]`)).find(visible);
      if (field) return field;
      const group = form.querySelector(`.group-error[data-path="${p}"]`);
      if (group) return group;
      parts = parts.slice(0, -1);
    }
    return null;
  }

  function showErrors(detail) {
    let first = null;
    detail.forEach((d) => {
      const target = fieldFor(d.field || "");
      const box = target && (target.classList.contains("group-error") ? target : target.querySelector(".error"));
      if (box) {
        box.textContent = (box.textContent ? box.textContent + " " : "") + d.msg;
        box.hidden = false;
        const input = target.querySelector && target.querySelector("input, textarea, select");
        if (input) { input.setAttribute("aria-invalid", "true"); first = first || input; }
      } else {
        status.textContent = `${d.field}: ${d.msg}`;
      }
    });
    if (first) { first.scrollIntoView({ block: "center" }); first.focus({ preventScroll: true }); }
    status.textContent = status.textContent || "Please correct the marked fields.";
  }

  function plotAll() {
    window.presscycleCharts.plot(results, figures);
  }

  const staleness = window.presscycleStale(results);
  const markStale = staleness.mark;
  const clearStale = staleness.clear;

  let edits = 0; // counts edits, so an answer to earlier inputs is never shown as current
  let asked = 0; // counts calculations, so only the latest answer is shown
  // the page's Plan link (a demo's or a saved scenario's) is drawn by the server with the first
  // results; results recalculated for the same inputs (another "Results in") keep it, with the units
  const planLink = results.querySelector("[data-testid=plan-link] a");
  const planHref = planLink ? planLink.getAttribute("href") : null;
  function keepPlanLink(units) {
    const slot = results.querySelector("[data-testid=plan-link]");
    if (!planHref || !slot || edits !== 0 || slot.querySelector("a")) return;
    const a = planLink.cloneNode(true);
    a.setAttribute("href", units === "si" ? planHref : `${planHref}?units=${units}`);
    slot.replaceChildren(a);
  }

  async function calculate() {
    clearErrors();
    status.textContent = "Calculating…";
    const body = collect();
    const editsAtAsk = edits;
    const mine = ++asked;
    const units = form.querySelector('[name="@display"]:checked').value;
    let response;
    try {
      response = await fetch(`/ui/results?units=${units}`, {
        method: "POST", headers: { "content-type": "application/json" }, body: JSON.stringify(body),
      });
    } catch (e) {
      status.textContent = "The server did not answer; check the connection and try again.";
      markStale("Not calculated: these results are for earlier inputs.");
      return false;
    }
    const data = await response.json().catch(() => ({}));
    if (mine !== asked) return false; // a later Calculate is on its way: this answer is stale
    if (response.status === 422) {
      status.textContent = "";
      showErrors(data.detail || []);
      markStale("The inputs on the left do not calculate: these results are for earlier inputs.");
      return false;
    }
    if (!response.ok) {
      status.textContent = data.detail || `The server answered ${response.status}.`;
      markStale("Not calculated: these results are for earlier inputs.");
      return false;
    }
    lastBody = body;
    results.innerHTML = data.html;
    keepPlanLink(units);
    clearStale();
    figures = data.figures || {};
    plotAll();
    showFlags(data.results && data.results.input_warnings);
    if (edits !== editsAtAsk) {
      // the inputs changed while this was calculated: shown, but marked as for earlier inputs
      markStale("You changed the inputs while this was calculated: press Calculate to see their results.");
      status.textContent = "Done, for the inputs as they were.";
      return false;
    }
    status.textContent = "Done.";
    document.dispatchEvent(new CustomEvent("presscycle:results", { detail: { body, results: data.results } }));
    return true;
  }

  async function saveScenario() {
    clearErrors();
    const saveStatus = document.getElementById("save-status");
    const body = {
      name: document.getElementById("save-name").value.trim(),
      note: document.getElementById("save-note").value.trim(),
      inputs: collect(),
    };
    if (staleness.stale) {
      // what is saved is what is on screen: calculate the edited inputs first
      saveStatus.textContent = "Calculating before saving…";
      if (!(await calculate())) {
        saveStatus.textContent = "Not saved: the inputs do not calculate; please correct the marked fields.";
        return;
      }
    }
    const parent = document.getElementById("save-parent").value;
    if (parent) body.parent = parent;
    saveStatus.textContent = "Saving…";
    let response;
    try {
      response = await fetch("/api/v1/scenarios", {
        method: "POST", headers: { "content-type": "application/json" }, body: JSON.stringify(body),
      });
    } catch (e) {
      saveStatus.textContent = "The server did not answer; nothing was saved.";
      return;
    }
    const data = await response.json().catch(() => ({}));
    if (response.status === 201) { window.location.href = data.link; return; }
    if (response.status === 422) {
      showErrors((data.detail || []).map((d) => ({ ...d, field: (d.field || "").replace(/^inputs\./, "") })));
      saveStatus.textContent = "Not saved: please correct the marked fields.";
      return;
    }
    saveStatus.textContent = `Not saved: ${data.detail || response.status}`;
  }

  form.addEventListener("submit", (e) => { e.preventDefault(); calculate(); });
  const onEdit = (e) => {
    const name = e.target.name || "";
    if (name === "@display" || name.startsWith("@save") || e.target.closest("[data-group=save]")) return;
    edits += 1;
    markStale("You changed the inputs: press Calculate to see their results. These are for the earlier inputs.");
  };
  form.addEventListener("input", onEdit);
  form.addEventListener("change", onEdit);
  document.getElementById("save").addEventListener("click", saveScenario);
  form.querySelectorAll("[data-choice] > select").forEach((sel) => {
    sel.addEventListener("change", () => {
      sel.parentElement.querySelectorAll(":scope > .option").forEach((o) => { o.hidden = o.dataset.option !== sel.value; });
      markUnused();
    });
  });
  markUnused();
  // a hint's usual range and a standard error's unit follow the unit chosen for the value
  form.querySelectorAll('select[name$="@unit"]').forEach((sel) => {
    sel.addEventListener("change", () => {
      const field = sel.closest(".field");
      const hint = field && field.querySelector(".hint[data-hints]");
      if (hint) {
        const text = JSON.parse(hint.dataset.hints)[sel.value];
        if (text) hint.textContent = text;
      }
      const path = sel.name.slice(0, -"@unit".length);
      const label = sel.options[sel.selectedIndex].textContent;
      form.querySelectorAll(`[data-unit-label-of="${path}"]`).forEach((span) => { span.textContent = label; });
    });
  });
  form.querySelectorAll('[name="@display"]').forEach((r) => r.addEventListener("change", () => { if (lastBody) calculate(); }));
  window.presscycle = { collect, calculate, lastBody: () => lastBody };
  // the buttons stay disabled until this script has taken over the form
  document.getElementById("calculate").disabled = false;
  document.getElementById("save").disabled = false;
  const initial = document.getElementById("initial-figures");
  if (initial) {
    figures = JSON.parse(initial.textContent);
    lastBody = collect();
    plotAll();
  }
  // the server drew the first results in SI; a choice made before this script ran (or kept by
  // the browser on going back) still counts
  if (form.querySelector('[name="@display"]:checked').value !== "si" && lastBody) calculate();
})();
