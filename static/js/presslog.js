// Press log page: a saved scenario and a CSV log, fitted cycle by cycle by the server.
// Logs run to tens of MB: the upload shows its progress, and the wait its seconds, after 1 s.
(function () {
  "use strict";
  const form = document.getElementById("presslog");
  const status = document.getElementById("status");
  const progress = document.getElementById("progress");
  const results = document.getElementById("results");
  const fileInput = document.getElementById("f-file");
  const fileInfo = document.getElementById("file-info");
  const saveGroup = document.getElementById("save-group");
  const saveStatus = document.getElementById("save-status");
  const staleness = window.presscycleStale(results);
  let logText = null;

  fileInput.addEventListener("change", () => {
    const file = fileInput.files[0];
    logText = null;
    if (!file) return;
    fileInfo.textContent = `Reading ${file.name}…`;
    const reader = new FileReader();
    reader.onload = () => {
      logText = reader.result;
      fileInfo.textContent = `${file.name}: ${(file.size / 1e6).toFixed(file.size < 1e7 ? 2 : 0)} MB read.`;
      staleness.mark("A new log was chosen: these results are for the earlier one.");
    };
    reader.onerror = () => { fileInfo.textContent = `The file ${file.name} could not be read.`; };
    reader.readAsText(file);
  });

  function text(name) {
    const el = form.querySelector(`[data-name="${name}"]`);
    return el ? el.value.trim() : "";
  }

  function quantity(name) {
    const raw = text(name);
    if (!raw) return undefined;
    const unit = form.querySelector(`[data-unit="${name}"]`);
    return window.presscycleEntry.withUnit(raw, unit ? unit.value : "");
  }

  // "3, 17-19" -> [3, 17, 18, 19]; a token that is not a whole number or a range is refused here
  function cycleList(name) {
    const raw = text(name);
    if (!raw) return undefined;
    const out = [];
    for (const token of raw.split(/[,;\s]+/).filter(Boolean)) {
      const m = token.match(/^(\d+)(?:[-–](\d+))?$/);
      if (!m) throw { field: name, msg: `'${token}' is not a cycle number or a range such as 17-19` };
      const a = Number(m[1]);
      const b = m[2] ? Number(m[2]) : a;
      if (b < a || b - a > 100000) throw { field: name, msg: `'${token}': a range runs from the lower number up` };
      for (let n = a; n <= b; n += 1) out.push(n);
    }
    return out;
  }

  function scenarioId() {
    const raw = text("scenario_id");
    const m = raw.match(/\/s\/([^/?#\s]+)/);
    return m ? m[1] : raw;
  }

  function collect(save) {
    const body = { csv: logText || "", scenario_id: scenarioId() || undefined };
    const density = quantity("filtrate_density");
    if (density) body.filtrate_density = density;
    const wash = quantity("cloth_wash_time");
    if (wash) body.cloth_wash_time = wash;
    const excluded = cycleList("exclude_cycles");
    if (excluded) body.exclude_cycles = excluded;
    const washes = cycleList("cloth_washes");
    if (washes) body.cloth_washes = washes;
    const chart = text("chart_cycle");
    if (chart) {
      if (!/^\d+$/.test(chart)) throw { field: "chart_cycle", msg: `'${chart}' is not a cycle number` };
      body.chart_cycle = Number(chart);
    }
    if (save) body.save = { name: document.getElementById("f-save-name").value.trim() };
    return body;
  }

  function clearErrors() {
    form.querySelectorAll(".error").forEach((e) => { e.hidden = true; e.textContent = ""; });
  }

  function showError(field, msg) {
    const path = field.startsWith("inputs") ? "scenario_id" : field.split(".")[0] === "save" ? "save.name" : field;
    const box = form.querySelector(`[data-path="${path}"] .error`)
      || form.querySelector(`[data-path="${field.split(".")[0]}"] .error`)
      || form.querySelector(".group-error");
    box.textContent = msg;
    box.hidden = false;
  }

  // POST with the upload's progress; resolves to {status, data}
  function send(body, onProgress) {
    return new Promise((resolve) => {
      const xhr = new XMLHttpRequest();
      xhr.open("POST", "/ui/press-log");
      xhr.setRequestHeader("content-type", "application/json");
      xhr.upload.onprogress = (e) => { if (e.lengthComputable) onProgress(e.loaded / e.total); };
      xhr.onload = () => {
        let data = {};
        try { data = JSON.parse(xhr.responseText); } catch (err) { data = {}; }
        resolve({ status: xhr.status, data });
      };
      xhr.onerror = () => resolve({ status: 0, data: {} });
      xhr.send(JSON.stringify(body));
    });
  }

  async function run(save) {
    clearErrors();
    let body;
    try {
      body = collect(save);
    } catch (e) {
      showError(e.field, e.msg);
      return;
    }
    if (!body.csv) { showError("csv", "choose the log's CSV file first"); return; }
    if (!body.scenario_id) { showError("scenario_id", "give the saved scenario the log belongs to"); return; }
    const started = Date.now();
    let uploaded = 0;
    const label = save ? saveStatus : status;
    label.textContent = save ? "Saving…" : "Sending the log…";
    // anything over a second shows its progress: the upload, then the seconds of fitting
    const ticker = setInterval(() => {
      const s = (Date.now() - started) / 1000;
      if (s < 1) return;
      progress.hidden = false;
      if (uploaded < 1) {
        progress.value = Math.round(uploaded * 100);
        label.textContent = `Sending the log: ${Math.round(uploaded * 100)} %`;
      } else {
        progress.removeAttribute("value");
        label.textContent = `Fitting the cycles… ${Math.round(s)} s`;
      }
    }, 250);
    const { status: code, data } = await send(body, (f) => { uploaded = f; });
    clearInterval(ticker);
    progress.hidden = true;
    progress.value = 0;
    if (code === 422) {
      label.textContent = "";
      (data.detail || []).forEach((d) => showError(d.field || "", d.msg));
      staleness.mark("The log or the inputs were refused: these results are for earlier ones.");
      return;
    }
    if (code !== 200) {
      label.textContent = code === 0 ? "The server did not answer." : (data.detail || `The server answered ${code}.`);
      staleness.mark("Not fitted: these results are for an earlier log.");
      return;
    }
    results.innerHTML = data.html;
    staleness.clear();
    window.presscycleCharts.plot(results, data.figures || {});
    saveGroup.hidden = data.calibrated === false; // nothing to save from a log whose units were slipped
    const secs = ((Date.now() - started) / 1000).toFixed(1);
    if (save && data.saved) {
      saveStatus.innerHTML = "";
      const a = document.createElement("a");
      a.href = data.saved.link;
      a.id = "saved-link";
      a.textContent = "Saved: open the calibrated copy";
      saveStatus.appendChild(a);
      status.textContent = `Done in ${secs} s.`;
    } else {
      status.textContent = `Done in ${secs} s.`;
    }
  }

  form.addEventListener("submit", (e) => { e.preventDefault(); run(false); });
  document.getElementById("save").addEventListener("click", () => run(true));
})();
