// Site-photo mock-up: click the wall's four corners on the photo; the server lays the plan into it.
(function () {
  "use strict";
  const card = document.getElementById("site-card");
  const input = document.getElementById("site-photo"), img = document.getElementById("site-image");
  const marks = document.getElementById("site-marks"), status = document.getElementById("site-status");
  const result = document.getElementById("site-result"), link = document.getElementById("site-download");
  const error = document.getElementById("site-error"), step = document.getElementById("site-step");
  const names = ["top-left", "top-right", "bottom-right", "bottom-left"];
  let corners = [];

  function draw() {
    marks.setAttribute("viewBox", "0 0 " + img.naturalWidth + " " + img.naturalHeight);
    const r = Math.max(img.naturalWidth, img.naturalHeight) / 120;
    marks.innerHTML = corners.map((p, i) =>
      '<circle cx="' + p[0] + '" cy="' + p[1] + '" r="' + r + '" fill="none" stroke="#ff0" stroke-width="' + r / 3 +
      '"/><text x="' + (p[0] + r * 1.5) + '" y="' + p[1] + '" fill="#ff0" font-size="' + r * 2.5 + '">' + (i + 1) + "</text>"
    ).join("") + (corners.length > 1 ? '<polygon points="' + corners.map(p => p.join(",")).join(" ") +
      '" fill="none" stroke="#ff0" stroke-width="' + r / 4 + '"/>' : "");
    status.textContent = corners.length < 4 ? "Click the wall's " + names[corners.length] + " corner." : "Laying the plan in…";
  }
  function send() {
    const data = new FormData();
    data.append("photo", input.files[0]);
    data.append("corners", corners.map(p => p[0].toFixed(1) + "," + p[1].toFixed(1)).join(","));
    data.append("step", step.value);
    error.hidden = true;
    fetch(card.dataset.url, {method: "POST", body: data}).then(async resp => {
      if (!resp.ok) {
        const body = await resp.json().catch(() => ({error: "the server refused the photo (" + resp.status + ")"}));
        throw new Error(body.error);
      }
      const url = URL.createObjectURL(await resp.blob());
      result.src = url; result.hidden = false; link.href = url; link.hidden = false;
      status.textContent = "Done: the plan on your photo.";
    }).catch(e => { error.textContent = e.message; error.hidden = false; status.textContent = "Not laid in."; });
  }
  input.addEventListener("change", () => {
    if (!input.files.length) return;
    corners = [];
    img.onload = () => { img.style.display = "block"; draw(); };
    img.src = URL.createObjectURL(input.files[0]);
  });
  img.addEventListener("click", ev => {
    if (corners.length >= 4) return;
    const box = img.getBoundingClientRect();
    // the photo's own pixels: the click's place in the shown image, scaled to its natural size
    corners.push([(ev.clientX - box.left) * img.naturalWidth / box.width,
                  (ev.clientY - box.top) * img.naturalHeight / box.height]);
    draw();
    if (corners.length === 4) send();
  });
  step.addEventListener("change", () => { if (corners.length === 4) send(); });
  document.getElementById("site-reset").addEventListener("click", () => { corners = []; if (img.src) draw(); });
})();
