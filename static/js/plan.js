// The Plan page: its units switch; save the scenario again, as a new scenario, with the plan's inputs (saved
// scenarios never change). No inline handlers: the page's CSP allows only our scripts.
(function () {
  "use strict";
  // the units of the plan: the form is sent again with the other choice (a plan is drawn only
  // when the form has a target, as with the Plan button)
  document.querySelectorAll('[data-testid=plan-units] input[name=units]').forEach((radio) => {
    radio.addEventListener("change", () => {
      // season temperatures typed as bare numbers are in °C (the SI page's hint): say so before
      // the US page reads them, which asks for a unit
      const temps = radio.form.querySelector("#f-temperatures");
      if (temps && radio.value === "us") {
        temps.value = temps.value.split(";").map((t) => t.trim()).filter(Boolean)
          .map((t) => (/^[-+]?\d+([.,]\d+)?$/.test(t) ? `${t} °C` : t)).join("; ");
      }
      if (radio.form.querySelector("#f-amount").value.trim()) radio.form.requestSubmit();
    });
  });
  const button = document.getElementById("save-plan");
  if (!button) return;
  button.addEventListener("click", async () => {
    const status = document.getElementById("save-status");
    const body = {
      name: `${button.dataset.name} (with plan)`.slice(0, 120),
      note: "Saved from the Plan page with its plan inputs.",
      inputs: JSON.parse(button.dataset.inputs),
      plan: JSON.parse(button.dataset.plan),
    };
    if (button.dataset.parent) body.parent = button.dataset.parent;
    button.disabled = true;
    status.textContent = "Saving…";
    const response = await fetch("/api/v1/scenarios", {
      method: "POST", headers: { "content-type": "application/json" }, body: JSON.stringify(body),
    });
    const answer = await response.json().catch(() => ({}));
    if (response.status === 201) { window.location.href = answer.link; return; }
    const detail = Array.isArray(answer.detail) ? answer.detail.map((d) => `${d.field}: ${d.msg}`).join("; ") : answer.detail;
    status.textContent = `Not saved: ${detail || response.status}`;
    button.disabled = false;
  });
})();
