// Counterpoise: redraw the guided run's polar diagram while a reading or a trial mass is typed. The server
// draws it (the same SVG code as the work order); this only asks again, at most every 350 ms.
(function () {
  var box = document.getElementById("live-diagram");
  if (!box) { return; }
  var form = box.closest("form");
  var url = box.getAttribute("data-src");
  var timer = null, asked = 0;
  function redraw() {
    var query = new URLSearchParams();
    new FormData(form).forEach(function (value, name) {
      if (name !== "csrf" && name !== "go" && typeof value === "string") { query.append(name, value); }
    });
    var mine = ++asked;
    fetch(url + "?" + query.toString(), {credentials: "same-origin"}).then(function (r) {
      return r.ok ? r.text() : null;
    }).then(function (svg) {
      if (svg !== null && mine === asked) { box.innerHTML = svg; box.setAttribute("data-drawn", String(mine)); }
    }).catch(function () {});
  }
  form.addEventListener("input", function () {
    if (timer) { window.clearTimeout(timer); }
    timer = window.setTimeout(redraw, 350);
  });
})();
