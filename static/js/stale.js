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

  // A lab-page section's fit: POST its inputs to ``url`` and show the answer, but only the
  // answer to the latest request, and only as current when the inputs were not edited while
  // it was on its way (else it is shown marked out of date). ``what`` names the inputs in the
  // messages ("readings", "test"). Returns the staleness object (for the section's own edits).
  window.presscycleFitPart = function ({ url, form, results, status, collect, showErrors, what, edited }) {
    const staleness = window.presscycleStale(results);
    let edits = 0;
    let latest = 0;
    const onEdit = () => { edits += 1; staleness.mark(edited); };
    form.addEventListener("input", onEdit);
    form.addEventListener("change", onEdit);
    async function fit() {
      const request = ++latest;
      const editsAtSend = edits;
      form.querySelectorAll(".error").forEach((e) => { e.hidden = true; e.textContent = ""; });
      status.textContent = "Fitting…";
      const response = await fetch(url, {
        method: "POST", headers: { "content-type": "application/json" }, body: JSON.stringify(collect()),
      }).catch(() => null);
      if (request !== latest) return; // a later fit is on its way: its answer is the one to show
      const earlier = `Not fitted: these results are for earlier ${what}.`;
      if (!response) { status.textContent = "The server did not answer."; staleness.mark(earlier); return; }
      const data = await response.json().catch(() => ({}));
      if (request !== latest) return;
      if (response.status === 422) {
        status.textContent = ""; showErrors(data.detail || []);
        staleness.mark(`The ${what} on the left do not fit: these results are for earlier ${what}.`);
        return;
      }
      if (!response.ok) {
        status.textContent = data.detail || `The server answered ${response.status}.`; staleness.mark(earlier); return;
      }
      results.innerHTML = data.html;
      staleness.clear();
      window.presscycleCharts.plot(results, data.figures || {});
      if (edits !== editsAtSend) {
        staleness.mark(`You changed the ${what} while they were being fitted: these results are for the ${what} as sent.`);
        status.textContent = "Done, for the earlier inputs.";
      } else {
        status.textContent = "Done.";
      }
    }
    return { fit, staleness, edited: onEdit };
  };
})();
