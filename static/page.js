// Progressive enhancement on the build page: a link to a form folded inside a closed <details>
// opens it and scrolls to it (browsers that do this themselves are not disturbed).
(function () {
  function openTarget() {
    var id = decodeURIComponent(window.location.hash.slice(1));
    var target = id ? document.getElementById(id) : null;
    if (!target) { return; }
    for (var el = target; el; el = el.parentElement) {
      if (el.tagName === "DETAILS") { el.open = true; }
    }
    target.scrollIntoView();
  }
  window.addEventListener("hashchange", openTarget);
  openTarget();
})();
