// Progressive enhancement: the Print button opens the browser's print dialog.
document.querySelectorAll("[data-print]").forEach(function (b) {
  b.hidden = false;
  b.addEventListener("click", function () { window.print(); });
});
