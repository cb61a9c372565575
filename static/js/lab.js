// Lab test page: one block per test, readings pasted or read from a file, fitted by the server.
(function () {
  "use strict";
  const form = document.getElementById("lab");
  const tests = document.getElementById("tests");
  const template = document.getElementById("test-template");
  const status = document.getElementById("status");
  const results = document.getElementById("results");

  // each unit menu shows the unit typed in its field, if any (entry.js)
  function followUnits(block) {
    block.querySelectorAll("select[data-unit]").forEach((menu) => {
      const input = block.querySelector(`input[data-name="${menu.dataset.unit}"]`);
      if (input) window.presscycleEntry.followTypedUnit(input, menu);
    });
  }

  function addTest() {
    const node = template.content.firstElementChild.cloneNode(true);
    const n = tests.children.length + 1;
    node.querySelector("legend").textContent = `Test ${n}`;
    node.querySelectorAll("input[data-name], textarea[data-name], select[data-unit]").forEach((el) => {
      const key = el.dataset.name || el.dataset.unit;
      el.id = `t${n}-${key.replace(".", "-")}${el.dataset.unit ? "-unit" : ""}`;
    });
    followUnits(node);
    node.querySelector(".remove").addEventListener("click", () => { if (tests.children.length > 1) node.remove(); });
    node.querySelector("input[type=file]").addEventListener("change", (e) => {
      const file = e.target.files[0];
      if (!file) return;
      const reader = new FileReader();
      reader.onload = () => { node.querySelector("textarea[data-name=csv]").value = reader.result; edited(); };
      reader.onerror = () => {
        status.textContent = `The file ${file.name} could not be read.`;
        staleness.mark("The file could not be read: these results are for earlier readings.");
      };
      reader.readAsText(file);
    });
    tests.appendChild(node);
    return node;
  }

  function value(block, name) {
    const el = block.querySelector(`[data-name="${name}"]`);
    const raw = el ? el.value.trim() : "";
    if (!raw) return undefined;
    const unit = block.querySelector(`[data-unit="${name}"]`);
    return window.presscycleEntry.withUnit(raw, unit ? unit.value : "");
  }

  // "1, 5", "1 5", "1-5", "1–5" or "1 to 5" (1-based, as the page counts) -> the API's 0-based pair;
  // anything else goes as typed, and the server says how to write it
  function readingsToFit(typed) {
    const m = typed.match(/^(\d+)\s*(?:[,;\-–—]|\s|\bto\b)\s*(\d+)$/i);
    return m ? [Number(m[1]) - 1, Number(m[2]) - 1] : typed;
  }

  function collect() {
    const body = { tests: [], model: document.getElementById("model").value,
                   pressure_basis: document.getElementById("pressure-basis").value };
    const ref = document.getElementById("ref-p").value.trim();
    if (ref) body.reference_pressure = window.presscycleEntry.withUnit(ref, document.getElementById("ref-p-unit").value);
    Array.from(tests.children).forEach((block) => {
      const t = {};
      ["name", "pressure", "area", "temperature", "viscosity", "c", "dry_cake_mass"].forEach((k) => {
        const v = value(block, k);
        if (v !== undefined) t[k] = k === "name" ? block.querySelector('[data-name="name"]').value.trim() : v;
      });
      t.csv = block.querySelector("textarea[data-name=csv]").value;
      const st = value(block, "start.time"), sv = value(block, "start.volume");
      if (st !== undefined || sv !== undefined) t.start = { time: st, volume: sv };
      const use = block.querySelector('[data-name="use"]').value.trim();
      if (use) t.use = readingsToFit(use);
      body.tests.push(t);
    });
    return body;
  }

  function showErrors(detail) {
    detail.forEach((d) => {
      const parts = (d.field || "").split(".");
      let box = null;
      if (parts[0] === "tests" && /^\d+$/.test(parts[1] || "")) {
        const block = tests.children[Number(parts[1])];
        const name = parts.slice(2).join(".");
        const field = block && (block.querySelector(`.field[data-path="${name}"]`) ||
                                block.querySelector(`.field[data-path="${parts[2]}"]`));
        box = field ? field.querySelector(".error") : block && block.querySelector(".group-error");
      } else {
        const field = form.querySelector(`.field[data-path="${parts[0]}"]`);
        box = field && field.querySelector(".error");
      }
      if (box) { box.textContent = d.msg; box.hidden = false; } else { status.textContent = `${d.field}: ${d.msg}`; }
    });
    if (!status.textContent) status.textContent = "Please correct the marked fields.";
  }

  // the compression-permeability table: its own form and results pane
  const cForm = document.getElementById("compression");
  const cResults = document.getElementById("compression-results");
  const cStatus = document.getElementById("compression-status");
  async function fitCompression() {
    const box = cForm.querySelector(".error");
    box.hidden = true; box.textContent = "";
    cStatus.textContent = "Fitting…";
    const response = await fetch("/ui/compression-fit", {
      method: "POST", headers: { "content-type": "application/json" },
      body: JSON.stringify({ csv: document.getElementById("compression-csv").value }),
    }).catch(() => null);
    if (!response) { cStatus.textContent = "The server did not answer."; return; }
    const data = await response.json().catch(() => ({}));
    if (response.status === 422) {
      cStatus.textContent = "Please correct the table.";
      box.textContent = (data.detail || []).map((d) => d.msg).join(" "); box.hidden = false;
      return;
    }
    if (!response.ok) { cStatus.textContent = data.detail || `The server answered ${response.status}.`; return; }
    cResults.innerHTML = data.html;
    window.presscycleCharts.plot(cResults, data.figures || {});
    cStatus.textContent = "Done.";
  }
  cForm.addEventListener("submit", (e) => { e.preventDefault(); fitCompression(); });

  const { fit, staleness, edited } = window.presscycleFitPart({
    url: "/ui/lab-fit", form, results, status, collect, showErrors, what: "readings",
    edited: "You changed the readings: press Fit to see their results. These are for the earlier readings.",
  });
  window.presscycleEntry.followTypedUnit(document.getElementById("ref-p"), document.getElementById("ref-p-unit"));
  document.getElementById("add-test").addEventListener("click", addTest);
  form.addEventListener("submit", (e) => { e.preventDefault(); fit(); });
  addTest();
  document.getElementById("fit").disabled = false;
  window.presscycleLab = { addTest, collect, fit };
})();
