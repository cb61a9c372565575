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

  const part = window.presscycleFitPart({
    url: "/ui/squeeze-fit", form, results, status, collect, showErrors, what: "readings",
    edited: "You changed the test: press Fit the squeeze to see its results. These are for the earlier test.",
  });
  const fit = part.fit;
  const edited = part.edited;
  document.getElementById("squeeze-file").addEventListener("change", (e) => {
    const file = e.target.files[0];
    if (!file) return;
    const reader = new FileReader();
    reader.onload = () => { csv.value = reader.result; edited(); };
    reader.onerror = () => { status.textContent = `The file ${file.name} could not be read.`; };
    reader.readAsText(file);
  });
  // each unit menu shows the unit typed in its field, if any (entry.js)
  form.querySelectorAll("select[data-unit]").forEach((menu) => {
    const input = form.querySelector(`input[data-name="${menu.dataset.unit}"]`);
    if (input) window.presscycleEntry.followTypedUnit(input, menu);
  });
  form.addEventListener("submit", (e) => { e.preventDefault(); fit(); });
  document.getElementById("fit-squeeze").disabled = false;
  window.presscycleSqueeze = { collect, fit };
})();
