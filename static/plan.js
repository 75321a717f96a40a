// Plan page: live progress while planning, the layer stepper once done, delete confirmation.
(function () {
  "use strict";
  var card = document.getElementById("progress");
  if (card) {
    var url = card.getAttribute("data-status-url");
    var fill = document.getElementById("bar-fill");
    var bar = card.querySelector(".bar");
    var percent = document.getElementById("percent");
    var stage = document.getElementById("stage");
    var title = card.querySelector("h2");
    var shown = 0;
    var misses = 0;
    var poll = function () {
      fetch(url, { cache: "no-store", headers: { Accept: "application/json" } })
        .then(function (r) {
          if (r.status === 404) { window.location.reload(); throw new Error("gone"); }
          return r.json();
        })
        .then(function (s) {
          misses = 0;
          shown = s.state === "queued" ? s.progress : Math.max(shown, s.progress);
          var pct = Math.round(shown * 100);
          fill.style.width = (shown * 100).toFixed(1) + "%";
          bar.setAttribute("aria-valuenow", String(pct));
          percent.textContent = pct + "%";
          stage.textContent = s.message;
          card.setAttribute("data-state", s.state);
          title.textContent = s.state === "queued" ? "Waiting for a free worker" : "Making the plan";
          if (s.state === "done" || s.state === "failed") {
            window.location.reload();
          } else {
            window.setTimeout(poll, 500);
          }
        })
        .catch(function () {
          misses += 1;
          stage.textContent = "lost contact with the server; retrying\u2026";
          window.setTimeout(poll, Math.min(10000, 1000 * misses));
        });
    };
    window.setTimeout(poll, 300);
  }

  var data = document.getElementById("steps-data");
  if (data) {
    var steps = JSON.parse(data.textContent);
    var img = document.getElementById("step-image");
    var slider = document.getElementById("step-slider");
    var label = document.getElementById("step-label");
    var detail = document.getElementById("step-detail");
    var prev = document.getElementById("step-prev");
    var next = document.getElementById("step-next");
    // fetch every picture once so stepping is instant
    steps.forEach(function (s) { var i = new Image(); i.src = s.url; });
    var show = function (n) {
      n = Math.max(0, Math.min(steps.length - 1, n));
      slider.value = String(n);
      img.src = steps[n].url;
      img.alt = "The wall after " + steps[n].label;
      label.textContent = steps[n].label;
      detail.textContent = steps[n].detail;
      prev.disabled = n === 0;
      next.disabled = n === steps.length - 1;
    };
    slider.addEventListener("input", function () { show(Number(slider.value)); });
    prev.addEventListener("click", function () { show(Number(slider.value) - 1); });
    next.addEventListener("click", function () { show(Number(slider.value) + 1); });
    document.addEventListener("keydown", function (e) {
      if (e.target && (e.target.tagName === "INPUT" || e.target.tagName === "TEXTAREA")) { return; }
      if (e.key === "ArrowLeft") { show(Number(slider.value) - 1); }
      if (e.key === "ArrowRight") { show(Number(slider.value) + 1); }
    });
    show(steps.length - 1);
  }

  // the wall-scale drawing: fitted to the window by CSS; a button fills the screen for projecting
  var full = document.getElementById("overlay-full");
  var overlay = document.getElementById("overlay-figure");
  if (full && overlay) {
    if (!overlay.requestFullscreen) { full.hidden = true; }
    full.addEventListener("click", function () {
      if (document.fullscreenElement) { document.exitFullscreen(); } else { overlay.requestFullscreen(); }
    });
  }

  document.querySelectorAll("form[data-confirm]").forEach(function (f) {
    f.addEventListener("submit", function (e) {
      if (!window.confirm(f.getAttribute("data-confirm"))) { e.preventDefault(); }
    });
  });
})();
