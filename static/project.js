// Projector view: one layer's SVG on black, mapped onto four draggable corners by a CSS matrix3d
// perspective transform, remembered per plan in this browser (localStorage).
(function () {
  "use strict";
  const body = document.body;
  const stage = document.getElementById("stage");
  const layers = JSON.parse(document.getElementById("layers-data").textContent);
  const wallW = parseFloat(body.dataset.wallW), wallH = parseFloat(body.dataset.wallH);
  const key = "layerplan:project:" + body.dataset.plan;
  const handles = Array.from(document.querySelectorAll(".corner"));
  let state = load();

  function defaults() {
    // the wall's shape, as large as fits the window with a margin
    const vw = window.innerWidth, vh = window.innerHeight;
    const s = Math.min(vw * 0.9 / wallW, vh * 0.9 / wallH);
    const w = wallW * s, h = wallH * s, x = (vw - w) / 2, y = (vh - h) / 2;
    return {layer: 0, outlines: false, grid: true, corners: [[x, y], [x + w, y], [x + w, y + h], [x, y + h]]};
  }
  function load() {
    try {
      const saved = JSON.parse(localStorage.getItem(key));
      if (saved && Array.isArray(saved.corners) && saved.corners.length === 4) return Object.assign(defaults(), saved);
    } catch (e) { /* a damaged entry: start again */ }
    return defaults();
  }
  function save() { localStorage.setItem(key, JSON.stringify(state)); }

  // the homography taking the unit square's corners to p[0..3] (Heckbert 1989, square-to-quad)
  function squareToQuad(p) {
    const [x0, y0] = p[0], [x1, y1] = p[1], [x2, y2] = p[2], [x3, y3] = p[3];
    const sx = x0 - x1 + x2 - x3, sy = y0 - y1 + y2 - y3;
    let a, b, c, d, e, f, g, h;
    if (Math.abs(sx) < 1e-9 && Math.abs(sy) < 1e-9) {
      a = x1 - x0; b = x2 - x1; c = x0; d = y1 - y0; e = y2 - y1; f = y0; g = 0; h = 0;
    } else {
      const dx1 = x1 - x2, dx2 = x3 - x2, dy1 = y1 - y2, dy2 = y3 - y2;
      const den = dx1 * dy2 - dx2 * dy1;
      g = (sx * dy2 - dx2 * sy) / den; h = (dx1 * sy - sx * dy1) / den;
      a = x1 - x0 + g * x1; b = x3 - x0 + h * x3; c = x0;
      d = y1 - y0 + g * y1; e = y3 - y0 + h * y3; f = y0;
    }
    return [a, b, c, d, e, f, g, h];
  }
  function place() {
    const w = 1000, h = 1000 * wallH / wallW;  // the stage's own size; the transform does the rest
    stage.style.width = w + "px"; stage.style.height = h + "px";
    const [a, b, c, d, e, f, g, k] = squareToQuad(state.corners);
    // x' = (a u + b v + c) / (g u + k v + 1) with u = x / w, v = y / h, as a column-major matrix3d
    const m = [a / w, d / w, 0, g / w, b / h, e / h, 0, k / h, 0, 0, 1, 0, c, f, 0, 1];
    stage.style.transform = "matrix3d(" + m.join(",") + ")";
    handles.forEach((el, i) => { el.style.left = state.corners[i][0] + "px"; el.style.top = state.corners[i][1] + "px"; });
  }
  function show() {
    const n = Math.max(0, Math.min(layers.length - 1, state.layer));
    state.layer = n;
    const L = layers[n];
    document.getElementById("layer-label").textContent =
      "Layer " + L.number + " of " + layers.length + " — " + L.brush_mm + " mm brush, " + L.strokes + " strokes";
    stage.dataset.layer = String(L.number);
    body.classList.toggle("outlines", !!state.outlines);
    body.classList.toggle("grid", !!state.grid);
    fetch(L.svg).then(r => r.text()).then(text => {
      if (state.layer !== n) return;  // stepped on meanwhile
      stage.innerHTML = text;
      const svg = stage.querySelector("svg");
      if (svg) { svg.removeAttribute("width"); svg.removeAttribute("height"); svg.setAttribute("preserveAspectRatio", "none"); }
      stage.dataset.shown = String(L.number);
    });
    save();
  }
  function step(d) { state.layer += d; show(); }

  handles.forEach((el, i) => {
    el.addEventListener("pointerdown", ev => {
      el.setPointerCapture(ev.pointerId);
      const move = m => { state.corners[i] = [m.clientX, m.clientY]; place(); };
      const up = () => { el.removeEventListener("pointermove", move); el.removeEventListener("pointerup", up); save(); };
      el.addEventListener("pointermove", move);
      el.addEventListener("pointerup", up);
    });
  });
  document.addEventListener("keydown", ev => {
    if (ev.key === "ArrowRight" || ev.key === "ArrowDown" || ev.key === "PageDown") { step(1); ev.preventDefault(); }
    else if (ev.key === "ArrowLeft" || ev.key === "ArrowUp" || ev.key === "PageUp") { step(-1); ev.preventDefault(); }
    else if (ev.key === "o" || ev.key === "O") { state.outlines = !state.outlines; show(); }
    else if (ev.key === "g" || ev.key === "G") { state.grid = !state.grid; show(); }
    else if (ev.key === "h" || ev.key === "H") { body.classList.toggle("hide-ui"); }
    else if (ev.key === "f" || ev.key === "F") {
      if (document.fullscreenElement) document.exitFullscreen(); else document.documentElement.requestFullscreen().catch(() => {});
    }
  });
  document.getElementById("prev").onclick = () => step(-1);
  document.getElementById("next").onclick = () => step(1);
  document.getElementById("mode").onclick = () => { state.outlines = !state.outlines; show(); };
  document.getElementById("grid").onclick = () => { state.grid = !state.grid; show(); };
  document.getElementById("hide").onclick = () => body.classList.toggle("hide-ui");
  document.getElementById("reset").onclick = () => { state.corners = defaults().corners; place(); save(); };
  place();
  show();
})();
