/* whyfired figures: draws the server-built plotly figures (Explain screen, reviews, rule
   replays) from the JSON beside each, fetches finer data when the reader zooms in, and
   offers the zoomed range as the new window. */
(function () {
  "use strict";

  // Nothing leaves the machine: no share-to-a-hosted-service button, no logo link, and no
  // destination address for one (plotly.js offers both by default). Same as PLOT_CONFIG in
  // webapp/web/charts/style.py, which the exported HTML uses.
  var CONFIG = {
    responsive: true,
    displaylogo: false,
    showSendToCloud: false,
    plotlyServerURL: "",
    modeBarButtonsToRemove: ["select2d", "lasso2d", "toImage", "sendChartToCloud"],
  };

  function readFigure(el) {
    var data = el.nextElementSibling;
    return JSON.parse(data.textContent);
  }

  function hasFigureData(el) {
    var data = el.nextElementSibling;
    return Boolean(data && data.classList.contains("figure-data"));
  }

  function xRange(event) {
    for (var key in event) {
      var m = key.match(/^xaxis\d*\.range\[0\]$/);
      if (m) {
        return [event[key], event[key.replace("[0]", "[1]")]];
      }
      if (/^xaxis\d*\.range$/.test(key)) return event[key];
    }
    return null;
  }

  function isAutorange(event) {
    return Object.keys(event).some(function (key) {
      return /^xaxis\d*\.autorange$/.test(key);
    });
  }

  function showMessage(el, text) {
    var note = el.parentNode.querySelector(".figure-message");
    if (!note) {
      note = document.createElement("p");
      note.className = "figure-message notice notice-warning";
      note.setAttribute("role", "status");
      el.parentNode.insertBefore(note, el.nextSibling);
    }
    note.textContent = text;
    note.hidden = !text;
  }

  function offerRange(el, range) {
    var panel = el.closest(".panel");
    var offer = panel && panel.querySelector(".range-offer");
    var controls = document.getElementById("controls");
    if (!offer || !controls) return;
    offer.hidden = !range;
    offer.dataset.start = range ? String(range[0]).slice(0, 16) : "";
    offer.dataset.end = range ? String(range[1]).slice(0, 16) : "";
  }

  function refine(el, event) {
    if (el._whyfiredBusy) return;
    var range = xRange(event);
    if (!range && !isAutorange(event)) return;
    if (!range) {
      el._whyfiredBusy = true;
      Plotly.react(el, el._whyfiredOriginal.data, el._whyfiredOriginal.layout).then(function () {
        el._whyfiredBusy = false;
      });
      showMessage(el, "");
      offerRange(el, null);
      return;
    }
    offerRange(el, range);
    var url = new URL(el.dataset.fineUrl, window.location.href);
    url.searchParams.set("from", range[0]);
    url.searchParams.set("to", range[1]);
    fetch(url, { headers: { Accept: "application/json" } })
      .then(function (response) {
        return response.json().then(function (body) {
          if (!response.ok) throw new Error(body.error || "The finer data could not be loaded.");
          return body;
        });
      })
      .then(function (fig) {
        el._whyfiredBusy = true;
        return Plotly.react(el, fig.data, fig.layout).then(function () {
          el._whyfiredBusy = false;
          showMessage(el, "");
        });
      })
      .catch(function (error) {
        el._whyfiredBusy = false;
        showMessage(el, error.message);
      });
  }

  function draw(root) {
    var figures = root.querySelectorAll ? root.querySelectorAll("[data-figure]") : [];
    Array.prototype.forEach.call(figures, function (el) {
      if (el.dataset.drawn || !hasFigureData(el)) return;
      el.dataset.drawn = "1";
      var fig;
      try {
        fig = readFigure(el);
      } catch (error) {
        showMessage(el, "This figure could not be read.");
        return;
      }
      el._whyfiredOriginal = fig;
      Plotly.newPlot(el, fig.data, fig.layout, CONFIG).then(function () {
        if (el.dataset.fineUrl) {
          el.on("plotly_relayout", function (event) {
            refine(el, event);
          });
        }
      });
    });
  }

  function useRange(button) {
    var offer = button.closest(".range-offer");
    var controls = document.getElementById("controls");
    if (!offer || !controls || !offer.dataset.start) return;
    controls.querySelector("[name=start]").value = offer.dataset.start;
    controls.querySelector("[name=end]").value = offer.dataset.end;
    htmx.trigger(controls, "submit");
  }

  function copySentences(button) {
    var panel = button.closest(".panel");
    var items = panel.querySelectorAll("#sentences li");
    var text = Array.prototype.map.call(items, function (li) {
      return li.textContent.trim();
    }).join("\n");
    var status = panel.querySelector("[data-copy-status]");
    navigator.clipboard.writeText(text).then(
      function () { status.textContent = "Copied, ready to paste into the review."; },
      function () { status.textContent = "The browser did not allow copying; select the text instead."; }
    );
  }

  document.addEventListener("click", function (event) {
    var button = event.target.closest("[data-use-range]");
    if (button) useRange(button);
    var copy = event.target.closest("[data-copy-sentences]");
    if (copy) copySentences(copy);
  });

  document.addEventListener("input", function (event) {
    if (event.target.id === "tolerance") {
      var out = document.getElementById("tolerance-out");
      if (out) out.textContent = event.target.value;
    }
  });

  // A control other than a typed time re-explains at once (a page's policy allows no
  // inline event filter, so the filtering is done here).
  document.addEventListener("change", function (event) {
    var form = event.target.form;
    if (form && form.id === "controls" && !event.target.classList.contains("manual")) {
      htmx.trigger(form, "controls-changed");
    }
  });

  // A new request clears the messages a refused one left beside the fields.
  document.addEventListener("htmx:beforeRequest", function () {
    document.querySelectorAll(".field-error").forEach(function (slot) {
      slot.textContent = "";
    });
  });

  // Keep the pushed address short: leave out the empty "leave out from/until" fields.
  document.addEventListener("htmx:configRequest", function (event) {
    if (event.detail.elt.id !== "controls") return;
    var params = event.detail.parameters;
    ["exclude_start", "exclude_end"].forEach(function (name) {
      var value = params.get ? params.get(name) : params[name];
      if (value === "" || value === null) {
        if (params.delete) params.delete(name);
        else delete params[name];
      }
    });
  });

  // A swapped-out figure is purged first: otherwise its resize listener and its toolbar
  // outlive it and the redrawn figure is laid out against the old one.
  document.addEventListener("htmx:beforeSwap", function (event) {
    var target = event.detail.target;
    if (!target || !target.querySelectorAll) return;
    target.querySelectorAll(".js-plotly-plot").forEach(function (el) {
      Plotly.purge(el);
    });
  });

  htmx.onLoad(draw);
})();
