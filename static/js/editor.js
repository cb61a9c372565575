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

  // Numbers go to the server as typed ("19 000", "1,2E11", "19.000,5"): the server reads them
  // (server/units.py split_number) and asks when one is ambiguous ("19,000"). A unit typed
  // after the number ("2 atm") wins over the unit menu.
  const NUMBER = /^[-+]?(?:\d|[.,]\d)[\d.,'\u2019 \u00a0\u2009\u202f]*(?:[eE][-+]?\d+)?/;
  function typedUnit(text) {
    const m = text.trim().match(NUMBER);
    return Boolean(m) && text.trim().slice(m[0].length).trim() !== "";
  }

  function unitOf(path, suffix) {
    const sel = Array.from(form.querySelectorAll(`[name="${path}@${suffix || "unit"}"]`)).find(visible);
    return sel ? sel.value : "";
  }

  function quantity(value, unit) {
    const v = value.trim();
    if (!unit || typedUnit(v)) return v;
    return `${v} ${unit}`;
  }

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
  function listItems(raw) {
    const parts = /[;\s]/.test(raw) ? raw.split(/;|,(?=\s)|\s+/) : raw.split(",");
    return parts.map((x) => x.trim()).filter(Boolean);
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
      if (path.indexOf("@") >= 0 || !visible(el) || el.closest("[data-group=save]")) return;
      const raw = el.value.trim();
      if (raw === "") return;
      const kind = el.dataset.kind || "";
      let value;
      if (kind === "curve" || kind === "steps") value = pairs(el, path);
      else if (kind === "list") value = listItems(raw).map((x) => quantity(x, unitOf(path)));
      else if (kind === "count") value = /^\d+$/.test(raw.replace(/[ \u00a0\u2009\u202f]/g, "")) ? Number(raw.replace(/\D/g, "")) : raw;
      else if (el.tagName === "SELECT") value = raw;
      else value = quantity(raw, unitOf(path));
      setPath(body, path, value);
    });
    return body;
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
    if (first) first.focus();
    status.textContent = status.textContent || "Please correct the marked fields.";
  }

  function plotAll() {
    window.presscycleCharts.plot(results, figures);
  }

  // Results shown are always those of the inputs on screen: after an edit or a failed
  // calculation they are greyed and say so (also to screen readers) until Calculate succeeds.
  let stale = false;
  function markStale(message) {
    if (!results.querySelector(".js-plotly-plot, .verdict, .cards")) return; // nothing shown yet
    stale = true;
    results.classList.add("stale");
    let note = document.getElementById("stale-note");
    if (!note) {
      note = document.createElement("p");
      note.id = "stale-note";
      note.className = "stale-note";
      note.setAttribute("role", "status");
      results.prepend(note);
    }
    note.textContent = message;
  }
  function clearStale() {
    stale = false;
    results.classList.remove("stale");
  }

  async function calculate() {
    clearErrors();
    status.textContent = "Calculating…";
    const body = collect();
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
    clearStale();
    figures = data.figures || {};
    plotAll();
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
    if (stale) {
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
    markStale("You changed the inputs: press Calculate to see their results. These are for the earlier inputs.");
  };
  form.addEventListener("input", onEdit);
  form.addEventListener("change", onEdit);
  document.getElementById("save").addEventListener("click", saveScenario);
  form.querySelectorAll("[data-choice] > select").forEach((sel) => {
    sel.addEventListener("change", () => {
      sel.parentElement.querySelectorAll(":scope > .option").forEach((o) => { o.hidden = o.dataset.option !== sel.value; });
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
