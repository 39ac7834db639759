// Upload progress for the dive form: optional, the form works without it.
// The form data keeps the fields' order (the fields before the samples).
"use strict";
document.addEventListener("DOMContentLoaded", function () {
  var form = document.querySelector("form.upload[data-progress]");
  if (!form || !window.XMLHttpRequest || !window.FormData) { return; }
  form.addEventListener("submit", function (ev) {
    ev.preventDefault();
    var bar = document.getElementById(form.dataset.progress);
    var text = document.getElementById("progress-text");
    var xhr = new XMLHttpRequest();
    xhr.open("POST", form.action);
    bar.hidden = false;
    xhr.upload.onprogress = function (e) {
      if (e.lengthComputable) {
        bar.value = Math.round(100 * e.loaded / e.total);
        text.textContent = "Sent " + bar.value + " %; the samples are checked as they arrive.";
      }
    };
    xhr.upload.onload = function () { text.textContent = "Sent; waiting for the verdict."; };
    xhr.onload = function () {
      document.open();
      document.write(xhr.responseText);
      document.close();
    };
    xhr.onerror = function () { text.textContent = "The upload failed: nothing was stored. Try again."; };
    form.querySelector("button[type=submit]").disabled = true;
    xhr.send(new FormData(form));
  });
});
