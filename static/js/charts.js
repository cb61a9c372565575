// Draws the server-built plotly figures of a page and offers each chart's data as CSV.
(function () {
  "use strict";

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
        rows.push(["series", title(xa), title(ya), "throughput"]);
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

  function plot(root, figures) {
    Object.entries(figures).forEach(([key, fig]) => {
      const el = document.getElementById(`chart-${key}`);
      if (el && window.Plotly) window.Plotly.newPlot(el, fig.data, fig.layout, { responsive: true, displaylogo: false });
    });
    root.querySelectorAll("button.csv").forEach((b) => b.addEventListener("click", () => download(b.dataset.chart, figures)));
  }

  window.presscycleCharts = { plot, toCsv };
  // pages without an editor: draw what the server embedded
  const embedded = document.getElementById("initial-figures");
  if (embedded && !document.getElementById("scenario")) plot(document, JSON.parse(embedded.textContent));
})();
