// A saved scenario's page: the print button (no inline handlers: the page's CSP allows only our scripts).
(function () {
  "use strict";
  const button = document.getElementById("print-report");
  if (button) button.addEventListener("click", () => window.print());
})();
