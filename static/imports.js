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
      if (progress && event.detail.lengthComputable) {
        progress.value = (event.detail.loaded / event.detail.total) * 100;
      }
    });
    form.addEventListener("htmx:afterRequest", function () {
      if (progress) progress.value = 0;
    });
  }

  if (document.readyState === "loading") {
    document.addEventListener("DOMContentLoaded", setUp);
  } else {
    setUp();
  }
})();
