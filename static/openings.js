// Start page: the openings typed in the form drawn as hatched rectangles over the photo preview, where the
// plan will put them (the wall laid over the photo as the fit puts it: cover crops, contain pads).
(function () {
  "use strict";
  const preview = document.getElementById("photo-preview");
  const field = document.getElementById("openings");
  if (!preview || !field) return;
  const MM = {mm: 1, cm: 10, m: 1000, in: 25.4, ft: 304.8};  // exact (NIST SP 811, Appendix B)
  const NS = "http://www.w3.org/2000/svg";
  const svg = document.createElementNS(NS, "svg");
  svg.id = "openings-preview";
  svg.setAttribute("aria-hidden", "true");
  svg.setAttribute("preserveAspectRatio", "none");
  svg.style.cssText = "position:absolute; pointer-events:none";
  preview.parentElement.style.position = "relative";
  preview.parentElement.appendChild(svg);

  function lengths(text) {  // "1.0,1.2,0.9,1.8m" -> mm, or null (the server says what is wrong)
    const items = text.split(",").map(s => s.trim().toLowerCase());
    if (items.length !== 4) return null;
    const parts = items.map(s => /^([-+]?(?:\d+(?:\.\d*)?|\.\d+))\s*([a-z]*)$/.exec(s));
    if (parts.some(p => !p)) return null;
    const last = parts[3][2];
    if (!(last in MM)) return null;
    return parts.map(p => parseFloat(p[1]) * MM[p[2] || last]);
  }
  function value(id) { const el = document.getElementById(id); return el ? el.value.trim() : ""; }

  function draw() {
    svg.innerHTML = "";
    if (preview.hidden || !preview.naturalWidth) return;
    const unit = MM[value("unit")] || 1000;
    const pw = preview.naturalWidth, ph = preview.naturalHeight;
    const wallW = parseFloat(value("wall_width")) * unit;
    let wallH = parseFloat(value("wall_height")) * unit;
    if (!(wallW > 0)) return;
    if (!(wallH > 0)) wallH = wallW * ph / pw;  // the height follows the photo
    const fit = (document.querySelector("input[name=fit]:checked") || {}).value || "cover";
    const s = fit === "contain" ? Math.min(wallW / pw, wallH / ph) : Math.max(wallW / pw, wallH / ph);
    const ox = (pw - wallW / s) / 2, oy = (ph - wallH / s) / 2;  // the wall's top-left in photo pixels
    svg.style.left = preview.offsetLeft + "px"; svg.style.top = preview.offsetTop + "px";
    svg.style.width = preview.offsetWidth + "px"; svg.style.height = preview.offsetHeight + "px";
    svg.setAttribute("viewBox", "0 0 " + pw + " " + ph);
    const t = Math.max(pw, ph) / 60;
    svg.innerHTML = '<defs><pattern id="opening-preview-hatch" width="' + t + '" height="' + t +
      '" patternUnits="userSpaceOnUse" patternTransform="rotate(45)"><rect width="' + t + '" height="' + t +
      '" fill="#fff" fill-opacity=".6"/><line x1="0" y1="' + t / 2 + '" x2="' + t + '" y2="' + t / 2 +
      '" stroke="#222" stroke-width="' + t / 6 + '"/></pattern></defs>';
    field.value.split(/[;\n]/).filter(l => l.trim()).forEach(line => {
      const r = lengths(line);
      if (!r) return;
      const rect = document.createElementNS(NS, "rect");
      rect.setAttribute("class", "opening");
      rect.setAttribute("x", ox + r[0] / s); rect.setAttribute("y", oy + r[1] / s);
      rect.setAttribute("width", r[2] / s); rect.setAttribute("height", r[3] / s);
      rect.setAttribute("fill", "url(#opening-preview-hatch)");
      rect.setAttribute("stroke", "#222"); rect.setAttribute("stroke-width", t / 4);
      svg.appendChild(rect);
    });
  }
  ["openings", "wall_width", "wall_height", "unit"].forEach(id => {
    const el = document.getElementById(id);
    if (el) { el.addEventListener("input", draw); el.addEventListener("change", draw); }
  });
  document.querySelectorAll("input[name=fit]").forEach(el => el.addEventListener("change", draw));
  preview.addEventListener("load", draw);
  window.addEventListener("resize", draw);
  draw();
})();
