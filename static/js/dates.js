// Saved times are served in UTC ("2026-12-02 01:23 UTC"); show them in the reader's own time.
(function () {
  "use strict";
  const format = new Intl.DateTimeFormat(undefined, { dateStyle: "medium", timeStyle: "short" });
  document.querySelectorAll("time[data-local][datetime]").forEach((el) => {
    const t = new Date(el.getAttribute("datetime"));
    if (Number.isNaN(t.getTime())) return;
    el.title = el.textContent; // the UTC time stays at hand
    el.textContent = format.format(t);
  });
})();
