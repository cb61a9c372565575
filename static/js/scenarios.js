// Saved-scenario list: compare the ticked ones; import a scenario file.
(function () {
  "use strict";
  const compare = document.getElementById("compare-form");
  compare.addEventListener("submit", (e) => {
    const ids = Array.from(compare.querySelectorAll("input[name=pick]:checked")).map((c) => c.value);
    if (ids.length < 2 || ids.length > 4) {
      e.preventDefault();
      alert("Tick two to four scenarios to compare.");
      return;
    }
    compare.querySelectorAll("input[name=pick]").forEach((c) => { c.disabled = true; });
    document.getElementById("compare-ids").value = ids.join(",");
  });
  const imp = document.getElementById("import-form");
  imp.addEventListener("submit", async (e) => {
    e.preventDefault();
    const status = document.getElementById("import-status");
    const file = document.getElementById("import-file").files[0];
    if (!file) { status.textContent = "Choose a file first."; return; }
    const data = new FormData();
    data.append("file", file);
    const response = await fetch("/api/v1/scenarios/import", { method: "POST", body: data });
    const body = await response.json().catch(() => ({}));
    if (response.status === 201) { window.location.href = body.link; return; }
    const detail = Array.isArray(body.detail) ? body.detail.map((d) => `${d.field}: ${d.msg}`).join("; ") : body.detail;
    status.textContent = `Not imported: ${detail || response.status}`;
  });
})();
