// Start page: photo preview, brush kit presets, inventory choice, local times.
(function () {
  "use strict";
  var input = document.getElementById("image");
  var preview = document.getElementById("photo-preview");
  var hint = document.getElementById("photo-hint");
  var info = document.getElementById("photo-info");
  var lastUrl = null;

  function sizeText(n) {  // SI, as the server's messages
    return n >= 1e6 ? (n / 1e6).toFixed(1) + " MB" : Math.max(1, Math.round(n / 1e3)) + " kB";
  }

  var kept = document.getElementById("upload_token");  // a photo the server kept from the last try

  function showPhoto() {
    var file = input.files && input.files[0];
    if (lastUrl) { URL.revokeObjectURL(lastUrl); lastUrl = null; }
    if (!file && kept) { return; }  // keep showing the kept photo
    if (!file) { preview.hidden = true; hint.hidden = false; info.textContent = ""; return; }
    if (kept) { kept.remove(); kept = null; input.required = true; }  // the new photo replaces it
    lastUrl = URL.createObjectURL(file);
    preview.onload = function () {
      info.textContent = file.name + " \u2014 " + preview.naturalWidth + " \u00d7 " + preview.naturalHeight +
        " px, " + sizeText(file.size);
    };
    preview.onerror = function () {
      preview.hidden = true; hint.hidden = false;
      info.textContent = file.name + ": this browser cannot show it; the server will still check it.";
    };
    preview.src = lastUrl;
    preview.hidden = false;
    hint.hidden = true;
  }
  if (input) { input.addEventListener("change", showPhoto); showPhoto(); }

  var kit = document.getElementById("kit");
  var brushes = document.getElementById("brushes");
  var custom = document.querySelector(".custom-widths");
  function showKit(fill) {
    if (!kit) { return; }
    var opt = kit.options[kit.selectedIndex];
    var isCustom = kit.value === "custom";
    if (!isCustom && fill) { brushes.value = opt.getAttribute("data-widths").split(",").join(", "); }
    brushes.readOnly = !isCustom;
    custom.classList.toggle("locked", !isCustom);
  }
  if (kit) {
    kit.addEventListener("change", function () { showKit(true); if (kit.value === "custom") { brushes.focus(); } });
    // keep widths the server sent back with an error; otherwise show the kit's widths
    if (brushes.value.trim() && kit.value !== "custom") {
      var sel = kit.options[kit.selectedIndex].getAttribute("data-widths").split(",").map(Number).join(",");
      var typed = brushes.value.split(",").map(function (s) { return Number(s.trim()); }).join(",");
      if (sel !== typed) { kit.value = "custom"; }
    }
    showKit(!brushes.value.trim());
  }

  var radios = document.querySelectorAll("input[name=inventory]");
  function showInventory() {
    var chosen = document.querySelector("input[name=inventory]:checked");
    var value = chosen ? chosen.value : "default";
    document.querySelectorAll("[data-inventory]").forEach(function (el) {
      el.hidden = el.getAttribute("data-inventory") !== value;
    });
  }
  radios.forEach(function (r) { r.addEventListener("change", showInventory); });
  if (radios.length) { showInventory(); }

  document.querySelectorAll(".when[data-time]").forEach(function (el) {
    var t = new Date(Number(el.getAttribute("data-time")) * 1000);
    el.textContent = t.toLocaleString(undefined, { dateStyle: "medium", timeStyle: "short" });
  });

  var form = document.getElementById("plan-form");
  if (form) {
    form.addEventListener("submit", function () {
      var b = document.getElementById("submit");
      b.disabled = true; b.textContent = "Uploading\u2026";
    });
    window.addEventListener("pageshow", function () {
      var b = document.getElementById("submit");
      b.disabled = false; b.textContent = "Make the plan";
    });
  }
})();
