// Progressive enhancements on the sheet page: the Print button opens the browser's print dialog;
// a Copy button copies the text of the element it names (the customer link's address).
document.querySelectorAll("[data-print]").forEach(function (b) {
  b.hidden = false;
  b.addEventListener("click", function () { window.print(); });
});
document.querySelectorAll("[data-copy]").forEach(function (b) {
  var source = document.getElementById(b.getAttribute("data-copy"));
  if (!source) { return; }
  b.hidden = false;
  var said = function (words) { b.textContent = words; };
  // Plain http on a shop network has no Clipboard API: select the text and copy it the old way.
  var bySelection = function () {
    var range = document.createRange();
    range.selectNodeContents(source);
    var selection = window.getSelection();
    selection.removeAllRanges();
    selection.addRange(range);
    var copied = false;
    try { copied = document.execCommand("copy"); } catch (e) { copied = false; }
    said(copied ? "Copied" : "Selected: press Ctrl+C");
  };
  b.addEventListener("click", function () {
    var text = source.textContent.trim();
    if (navigator.clipboard && window.isSecureContext) {
      navigator.clipboard.writeText(text).then(function () { said("Copied"); }, bySelection);
    } else {
      bySelection();
    }
  });
});
