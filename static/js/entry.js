// Numbers go to the server as typed ("19 000", "1,2E11", "19.000,5"): the server reads them
// (server/units.py split_number) and asks when one is ambiguous ("19,000"). A unit typed
// after the number ("2 atm") wins over the unit menu.
(function () {
  "use strict";
  const NUMBER = /^[-+]?(?:\d|[.,]\d)[\d.,'\u2019 \u00a0\u2009\u202f]*(?:[eE][-+]?\d+)?/;

  function typedUnit(text) {
    const t = text.trim();
    const m = t.match(NUMBER);
    return Boolean(m) && t.slice(m[0].length).trim() !== "";
  }

  // "<number> <menu unit>", or the text as typed when it carries its own unit
  function withUnit(value, unit) {
    const v = value.trim();
    if (!unit || typedUnit(v)) return v;
    return `${v} ${unit}`;
  }

  window.presscycleEntry = { typedUnit, withUnit };
})();
