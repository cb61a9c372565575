// Draws the server-built plotly figures of a page and offers each chart's data as CSV.
// Each chart is drawn at its container's width and redrawn when that width changes: a window
// resize, the editor's columns folding, and printing (the print layout is one column, so the
// charts are redrawn at the printable width before the page is printed, and back after).
(function () {
  "use strict";

  /** Height of a chart whose figure does not set one (px). */
  const DEFAULT_HEIGHT = 420;

  function csvCell(v) {
    const s = v === null || v === undefined ? "" : String(v);
    return /[",\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
  }

  function toCsv(el, fig) {
    const layout = (el && el.layout) || fig.layout;
    const title = (ax) => (layout[ax] && layout[ax].title && layout[ax].title.text) || ax;
    const rows = [];
    ((el && el.data) || fig.data).forEach((tr) => {
      const xa = "xaxis" + (tr.xaxis && tr.xaxis !== "x" ? tr.xaxis.slice(1) : "");
      const ya = "yaxis" + (tr.yaxis && tr.yaxis !== "y" ? tr.yaxis.slice(1) : "");
      if (tr.type === "contour") {
        const bar = tr.colorbar && tr.colorbar.title;
        rows.push(["series", title(xa), title(ya), (bar && (bar.text || bar)) || "throughput"]);
        tr.y.forEach((y, i) => tr.x.forEach((x, j) => rows.push([tr.name, x, y, tr.z[i][j]])));
      } else {
        rows.push(["series", title(xa), title(ya)]);
        tr.x.forEach((x, i) => rows.push([tr.name, x, tr.y[i]]));
      }
    });
    return rows.map((r) => r.map(csvCell).join(",")).join("\n") + "\n";
  }

  function download(key, figures) {
    const el = document.getElementById(`chart-${key}`);
    if (!figures[key]) return;
    const a = document.createElement("a");
    a.href = URL.createObjectURL(new Blob([toCsv(el, figures[key])], { type: "text/csv" }));
    a.download = `presscycle-${key}.csv`;
    document.body.appendChild(a);
    a.click();
    a.remove();
  }

  // The figure's title is shown as text above the plot, not inside it: plotly would put it in
  // the top margin, where the legend row goes. The server escapes names for plotly (which reads
  // a little HTML), so the title is parsed as HTML and only its text is kept.
  function showTitle(el, layout) {
    const t = layout.title;
    const text = t ? (typeof t === "string" ? t : t.text || "") : "";
    let head = el.previousElementSibling;
    if (!head || !head.classList.contains("chart-title")) {
      head = document.createElement("p");
      head.className = "chart-title";
      el.parentNode.insertBefore(head, el);
    }
    head.textContent = new DOMParser().parseFromString(text, "text/html").body.textContent;
  }

  /** Redraw a chart at its container's width when that has changed. A fresh draw (synchronous
   *  for these figures, so it is done before a print is laid out): after a relayout of the width
   *  alone plotly left the legend where the old width's margins had put it, over the plot. */
  function fit(el) {
    const w = el.clientWidth;
    if (!window.Plotly || !el._fullLayout || w <= 0 || Math.abs(el._fullLayout.width - w) < 1) return;
    window.Plotly.newPlot(el, el.data, Object.assign({}, el.layout, { width: w }), options());
  }

  /** plotly's options: on a phone-wide screen no tool bar, which it shows over the legend row at
   *  the top right (a plant-engineer check at 390 px); a finger zooms and pans the chart itself,
   *  and the CSV button below each chart stays. The screen's width decides, not the chart's: two
   *  charts side by side on a desktop are each narrower than a phone (a review). */
  function options() {
    return window.matchMedia("(max-width: 600px)").matches
      ? { displaylogo: false, displayModeBar: false } : { displaylogo: false };
  }

  function fitAll() {
    document.querySelectorAll(".js-plotly-plot").forEach(fit);
  }

  const observer = "ResizeObserver" in window ? new ResizeObserver((entries) => entries.forEach((e) => fit(e.target))) : null;

  const observed = new Set();

  function plot(root, figures) {
    // charts of an earlier results pane, replaced since: no longer watched
    observed.forEach((el) => {
      if (!el.isConnected) {
        observer.unobserve(el);
        observed.delete(el);
      }
    });
    Object.entries(figures).forEach(([key, fig]) => {
      const el = document.getElementById(`chart-${key}`);
      if (!el || !window.Plotly) return;
      const layout = Object.assign({}, fig.layout, { autosize: false, height: fig.layout.height || DEFAULT_HEIGHT });
      showTitle(el, layout);
      delete layout.title;
      if (el.clientWidth > 0) layout.width = el.clientWidth;
      window.Plotly.newPlot(el, fig.data, layout, options());
      if (observer) {
        observer.observe(el);
        observed.add(el);
      }
    });
    root.querySelectorAll("button.csv").forEach((b) => b.addEventListener("click", () => download(b.dataset.chart, figures)));
  }

  if (!observer) window.addEventListener("resize", fitAll);
  // printing: the print layout applies when "print" matches, so the containers have their
  // printed width then; beforeprint/afterprint cover browsers that lay out only afterwards
  window.matchMedia("print").addEventListener("change", fitAll);
  window.addEventListener("beforeprint", fitAll);
  window.addEventListener("afterprint", fitAll);

  window.presscycleCharts = { plot, toCsv, fitAll };
  // pages without an editor: draw what the server embedded
  const embedded = document.getElementById("initial-figures");
  if (embedded && !document.getElementById("scenario")) plot(document, JSON.parse(embedded.textContent));
})();
