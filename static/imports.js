/* whyfired Imports screen: drag-and-drop onto the picker, and upload progress. */
(function () {
  "use strict";

  function setUp() {
    var zone = document.getElementById("dropzone");
    var input = document.getElementById("files");
    var form = document.getElementById("upload-form");
    var progress = document.getElementById("upload-progress");
    if (!zone || !input || !form) return;

    ["dragenter", "dragover"].forEach(function (name) {
      zone.addEventListener(name, function (event) {
        event.preventDefault();
        zone.classList.add("is-over");
      });
    });
    ["dragleave", "drop"].forEach(function (name) {
      zone.addEventListener(name, function () {
        zone.classList.remove("is-over");
      });
    });
    zone.addEventListener("drop", function (event) {
      event.preventDefault();
      if (event.dataTransfer && event.dataTransfer.files.length) {
        input.files = event.dataTransfer.files;
      }
    });

    form.addEventListener("htmx:xhr:progress", function (event) {
      if (!progress || !event.detail.lengthComputable) return;
      if (event.detail.loaded >= event.detail.total) {
        progress.removeAttribute("value"); // sent: now reading and storing, no fraction known
      } else {
        progress.value = (event.detail.loaded / event.detail.total) * 100;
      }
    });

    // Refuse an upload over the limit before sending it, with the same words as the server.
    form.addEventListener("htmx:confirm", function (event) {
      var limit = Number(form.dataset.maxBytes || 0);
      var total = Array.prototype.reduce.call(input.files, function (sum, f) {
        return sum + f.size;
      }, 0);
      if (limit && total > limit) {
        event.preventDefault();
        var results = document.getElementById("import-results");
        results.innerHTML = "";
        var note = document.createElement("div");
        note.className = "notice notice-error";
        note.setAttribute("role", "alert");
        note.textContent = "These files come to " + (total / 1048576).toFixed(1) +
          " MB; uploads of up to " + form.dataset.maxMb + " MB are accepted at once. " +
          "Split the export, or import fewer files together.";
        results.appendChild(note);
      }
    });
    form.addEventListener("htmx:afterRequest", function (event) {
      if (progress) progress.value = 0;
      if (event.detail.successful) form.reset();
    });
    form.addEventListener("htmx:sendError", function () {
      document.getElementById("import-results").textContent =
        "The upload did not reach whyfired. Is the server still running?";
    });
  }

  if (document.readyState === "loading") {
    document.addEventListener("DOMContentLoaded", setUp);
  } else {
    setUp();
  }
})();
