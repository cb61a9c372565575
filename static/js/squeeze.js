// Lab page, Squeeze test section: readings pasted or read from a file, fitted by the server
// (POST /ui/squeeze-fit, the twin of /api/v1/squeeze-fit), errors marked at their fields.
(function () {
  "use strict";
  const form = document.getElementById("squeeze");
  if (!form) return;
  const status = document.getElementById("squeeze-status");
  const results = document.getElementById("squeeze-results");
  const csv = document.getElementById("squeeze-csv");

  function value(name) {
    const el = form.querySelector(`input[data-name="${name}"]`);
    const raw = el ? el.value.trim() : "";
    if (!raw) return undefined;
    const unit = form.querySelector(`[data-unit="${name}"]`);
    return window.presscycleEntry.withUnit(raw, unit ? unit.value : "");
  }

  function collect() {
    const body = { csv: csv.value };
    ["pressure", "dry_solids_mass", "solids_density", "area", "initial_thickness"].forEach((k) => {
      const v = value(k);
      if (v !== undefined) body[k] = v;
    });
    const name = form.querySelector('input[data-name="name"]').value.trim();
    if (name) body.name = name;
    body.drained_faces = Number(form.querySelector('select[data-name="drained_faces"]').value);
    body.creep = form.querySelector('select[data-name="creep"]').value === "true";
    return body;
  }

  function showErrors(detail) {
    detail.forEach((d) => {
      const top = (d.field || "").split(".")[0];
      const field = form.querySelector(`.field[data-path="${top}"]`);
      const box = field && field.querySelector(".error");
      if (box) { box.textContent = d.msg; box.hidden = false; } else { status.textContent = `${d.field}: ${d.msg}`; }
    });
    if (!status.textContent) status.textContent = "Please correct the marked fields.";
  }

  async function fit() {
    form.querySelectorAll(".error").forEach((e) => { e.hidden = true; e.textContent = ""; });
    status.textContent = "Fitting…";
    const response = await fetch("/ui/squeeze-fit", {
      method: "POST", headers: { "content-type": "application/json" }, body: JSON.stringify(collect()),
    }).catch(() => null);
    const earlier = "Not fitted: these results are for earlier readings.";
    if (!response) { status.textContent = "The server did not answer."; staleness.mark(earlier); return; }
    const data = await response.json().catch(() => ({}));
    if (response.status === 422) {
      status.textContent = ""; showErrors(data.detail || []);
      staleness.mark("The inputs on the left do not fit: these results are for earlier readings.");
      return;
    }
    if (!response.ok) { status.textContent = data.detail || `The server answered ${response.status}.`; staleness.mark(earlier); return; }
    results.innerHTML = data.html;
    staleness.clear();
    window.presscycleCharts.plot(results, data.figures || {});
    status.textContent = "Done.";
  }

  const staleness = window.presscycleStale(results);
  const edited = () => staleness.mark("You changed the test: press Fit the squeeze to see its results. These are for the earlier test.");
  document.getElementById("squeeze-file").addEventListener("change", (e) => {
    const file = e.target.files[0];
    if (!file) return;
    const reader = new FileReader();
    reader.onload = () => { csv.value = reader.result; edited(); };
    reader.onerror = () => { status.textContent = `The file ${file.name} could not be read.`; };
    reader.readAsText(file);
  });
  form.addEventListener("input", edited);
  form.addEventListener("change", edited);
  form.addEventListener("submit", (e) => { e.preventDefault(); fit(); });
  document.getElementById("fit-squeeze").disabled = false;
  window.presscycleSqueeze = { collect, fit };
})();
