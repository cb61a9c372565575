// Numbers go to the server as typed ("19 000", "1,2E11", "19.000,5"): the server reads them
// (server/units.py split_number) and asks when one is ambiguous ("19,000"). A unit typed
// after the number ("2 atm") wins over the unit menu, and the menu then shows it (followTypedUnit).
(function () {
  "use strict";
  const NUMBER = /^[-+]?(?:\d|[.,]\d)[\d.,'\u2019 \u00a0\u2009\u202f]*(?:[eE][-+]?\d+)?/;

  // the unit typed after the number ("2.5 m^2" -> "m^2"), or "" (none, or no number)
  function unitText(text) {
    const t = text.trim();
    const m = t.match(NUMBER);
    return m ? t.slice(m[0].length).trim() : "";
  }

  function typedUnit(text) {
    return unitText(text) !== "";
  }

  // "<number> <menu unit>", or the text as typed when it carries its own unit
  function withUnit(value, unit) {
    const v = value.trim();
    if (!unit || typedUnit(v)) return v;
    return `${v} ${unit}`;
  }

  // a unit in the menus' spelling (pint's, as server/units.py reads it), to match a typed one:
  // "m²", "m2" and "m^2" are one unit, "°C" is "degC", "mPa·s" is "mPa*s"
  function menuSpelling(unit) {
    return unit.trim()
      .replace(/\s*([\/*·⋅^()])\s*/g, "$1")
      .replace(/\*\*/g, "^").replace(/²/g, "^2").replace(/³/g, "^3").replace(/[·⋅]/g, "*")
      .replace(/°C|℃/g, "degC").replace(/°F/g, "degF")
      .replace(/\b(m|cm|mm|dm|ft|in)([23])\b/g, "$1^$2");
  }

  const TYPED_TITLE = "The unit typed in the field is used; clear it to choose from this menu";

  // The menu beside a field never contradicts a unit typed in it ("2.5 m^2" beside "cm²" did: a
  // plant-engineer check). While a unit is typed, the menu shows it, chosen from its own list when
  // it is there, else as typed, and is disabled (the typed unit is what is sent). Cleared, the menu
  // is free again, keeping a unit of its own list that the field had (the number means what it
  // meant), or going back to the menu's earlier choice.
  function followTypedUnit(input, menu) {
    let typedOption = null;
    let chosen = menu.value;
    function dropTyped() {
      if (typedOption) {
        typedOption.remove();
        typedOption = null;
        menu.value = chosen;
      }
    }
    function sync() {
      const unit = unitText(input.value);
      if (!unit) {
        dropTyped();
        menu.disabled = false;
        menu.removeAttribute("title");
        return;
      }
      const key = menuSpelling(unit);
      const listed = Array.from(menu.options).find((o) => o !== typedOption && o.value && menuSpelling(o.value) === key);
      if (listed) {
        dropTyped();
        if (menu.value !== listed.value) {
          menu.value = listed.value;
          chosen = listed.value;
          menu.dispatchEvent(new Event("change", { bubbles: true }));  // hints and labels follow the menu
        }
      } else {
        if (!typedOption) {
          typedOption = new Option("", "");
          typedOption.dataset.typed = "";
          menu.add(typedOption);
        }
        typedOption.textContent = unit;
        typedOption.value = unit;
        menu.value = unit;
      }
      menu.disabled = true;
      menu.title = TYPED_TITLE;
    }
    menu.addEventListener("change", () => { if (!typedOption) chosen = menu.value; });
    input.addEventListener("input", sync);
    sync();
  }

  window.presscycleEntry = { typedUnit, unitText, withUnit, followTypedUnit };
})();
