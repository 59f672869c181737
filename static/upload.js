// Progressive enhancement: send a data-log file with a progress bar, then follow the server's
// answer (the mapping page, or the pass page with a message). Without it the form posts as is.
document.querySelectorAll("form[data-upload]").forEach(function (form) {
  var bar = form.querySelector("progress");
  var said = form.querySelector("[data-upload-status]");
  form.addEventListener("submit", function (ev) {
    if (!window.XMLHttpRequest || !window.FormData) { return; }
    ev.preventDefault();
    var xhr = new XMLHttpRequest();
    xhr.open("POST", form.action);
    xhr.upload.addEventListener("progress", function (e) {
      if (!e.lengthComputable) { return; }
      bar.hidden = false;
      bar.max = e.total;
      bar.value = e.loaded;
      said.textContent = "Sending: " + Math.round(100 * e.loaded / e.total) + " %";
    });
    xhr.addEventListener("load", function () {
      said.textContent = "Reading the file…";
      if (xhr.responseURL && xhr.responseURL !== form.action) {
        window.location.assign(xhr.responseURL);
      } else {
        document.open();
        document.write(xhr.responseText);
        document.close();
      }
    });
    xhr.addEventListener("error", function () {
      said.textContent = "The upload failed (connection lost). Nothing was saved; try again.";
    });
    form.querySelector("button").disabled = true;
    xhr.send(new FormData(form));
  });
});
