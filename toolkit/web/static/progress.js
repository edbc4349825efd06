// Counterpoise: follow a planner batch; when it has finished, reload the page to show the rows and the download.
(function () {
  var box = document.getElementById("batch");
  if (!box) { return; }
  var url = box.getAttribute("data-state");
  function tick() {
    fetch(url, {credentials: "same-origin"}).then(function (r) { return r.json(); }).then(function (s) {
      document.getElementById("progress").textContent =
        s.done + (s.total ? " of " + s.total : "") + " rows, " + s.failed + " failed";
      var bar = document.getElementById("bar");
      bar.max = s.total || 1; bar.value = s.total ? s.done : 0;
      if (s.finished) { window.location.reload(); } else { window.setTimeout(tick, 400); }
    }).catch(function () { window.setTimeout(tick, 2000); });
  }
  window.setTimeout(tick, 300);
})();
