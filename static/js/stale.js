// Results shown are always those of the inputs on screen: after an edit or a failed
// calculation they are greyed and say so (also to screen readers) until a new answer comes.
(function () {
  "use strict";
  window.presscycleStale = function (results) {
    const state = { stale: false };
    state.mark = function (message) {
      if (!results.querySelector(".js-plotly-plot, .verdict, .cards, section")) return; // nothing shown yet
      state.stale = true;
      results.classList.add("stale");
      let note = results.querySelector(".stale-note");
      if (!note) {
        note = document.createElement("p");
        note.id = results.id === "results" ? "stale-note" : "";
        note.className = "stale-note";
        note.setAttribute("role", "status");
        results.prepend(note);
      }
      note.textContent = message;
    };
    state.clear = function () {
      state.stale = false;
      results.classList.remove("stale");
      const note = results.querySelector(".stale-note");
      if (note) note.remove();
    };
    return state;
  };
})();
