// cloakview live: the page's own script (no framework, no build step, nothing fetched
// from elsewhere). Lengths are millimetres throughout; the plan is drawn in the device
// frame: x sideways (right positive), z along the axis (into the device positive), drawn
// with z growing upwards, so the visitor stands below the device.
"use strict";

const SVG = "http://www.w3.org/2000/svg";
const NUDGE_MM = 5;          // one arrow-key press
const BIG_NUDGE_MM = 50;     // with Shift
const REST_MS = 250;         // no movement for this long: ask for the full frame
const EYE_RADIUS_PX = 7;

const app = {
  scene: null, plan: null,
  eye: {lateral_mm: 0, distance_mm: 1500, height_mm: 1250},
  outer: "scene", inner: "scene", view: "cloaked",
  camera: {cx: 0, cz: 0, mmPerPx: 10},
  dragging: false, restTimer: null,
  seq: 0, wanted: null, previewInFlight: null, shownSeq: 0,
  changedAt: new Map(),           // seq -> time of the change that asked for it
  painted: null,                  // the last answer painted
  last: null,                     // the last full-quality answer painted
  stats: {painted: []},           // for the latency benchmark and the tests
};
window.cloakview = app;

const $ = (id) => document.getElementById(id);

function el(name, attrs = {}, parent = null) {
  const node = document.createElementNS(SVG, name);
  for (const [k, v] of Object.entries(attrs)) node.setAttribute(k, v);
  if (parent) parent.appendChild(node);
  return node;
}

function showError(text) {
  const box = $("error");
  box.textContent = text || "";
  box.hidden = !text;
}

async function getJSON(url, options) {
  const response = await fetch(url, options);
  let body = null;
  try { body = await response.json(); } catch (e) { body = null; }
  if (!response.ok) {
    throw new Error((body && body.error) || `${url}: HTTP ${response.status}`);
  }
  return body;
}

// ---- the floor plan ------------------------------------------------------------------
function planSize() {
  const box = $("plan").getBoundingClientRect();
  return {w: Math.max(box.width, 50), h: Math.max(box.height, 50)};
}

function eyeZ() { return app.plan.panel_z_mm - app.eye.distance_mm; }

function fitWhole() {
  const p = app.plan, s = planSize();
  const far = Math.max(...p.layers.map((l) => l.z_mm), p.tube_end_mm);
  const near = Math.min(p.panel_z_mm - app.eye.distance_mm,
    ...app.scene.viewers.map((v) => p.panel_z_mm - v.distance_mm));
  const halfWidth = Math.max(...p.layers.map((l) => Math.max(-l.left_mm, l.right_mm)),
    p.panel_half_width_mm, Math.abs(app.eye.lateral_mm));
  app.camera.mmPerPx = 1.15 * Math.max((far - near) / s.h, 2 * halfWidth / s.w);
  app.camera.cx = 0;
  app.camera.cz = (far + near) / 2;
}

function zoomToEye() {
  app.camera.mmPerPx = 2;
  app.camera.cx = app.eye.lateral_mm;
  app.camera.cz = eyeZ() + 0.25 * planSize().h * 2;
}

function keepEyeInView() {
  const s = planSize(), c = app.camera;
  const x = (app.eye.lateral_mm - c.cx) / c.mmPerPx, y = (eyeZ() - c.cz) / c.mmPerPx;
  if (Math.abs(x) > 0.45 * s.w) c.cx = app.eye.lateral_mm;
  if (Math.abs(y) > 0.45 * s.h) c.cz = eyeZ() + 0.25 * s.h * c.mmPerPx;
}

function niceStep(mm) {
  const p = Math.pow(10, Math.floor(Math.log10(mm)));
  return [1, 2, 5, 10].map((k) => k * p).find((v) => v >= mm);
}

function nearestZoneHeight() {
  const zone = app.scene.sight_lines;
  if (!zone) return null;
  let best = null;
  for (const [name, h] of Object.entries(zone.heights_mm)) {
    if (best === null || Math.abs(h - app.eye.height_mm) < Math.abs(best.h - app.eye.height_mm)) {
      best = {name, h};
    }
  }
  return best;
}

let drawnKey = null;     // what the plan's fixed layer was last drawn for
let drawQueued = false;

function drawPlan() {
  const near = nearestZoneHeight();
  const key = JSON.stringify([app.camera, planSize(), app.outer, app.inner, near && near.h]);
  if (key !== drawnKey) {
    drawFixed();
    drawnKey = key;
  }
  drawEye();
}

function queueDraw() {
  // Pointer moves come faster than the screen refreshes: draw once per animation frame.
  if (drawQueued) return;
  drawQueued = true;
  requestAnimationFrame(() => { drawQueued = false; drawPlan(); });
}

function drawEye() {
  const layer = $("eye-layer"), p = app.plan, k = app.camera.mmPerPx;
  const stroke = {"vector-effect": "non-scaling-stroke"};
  const ez = eyeZ(), ex = app.eye.lateral_mm, pz = -p.panel_z_mm;
  layer.replaceChildren();
  for (const r of [-p.hole_radius_mm, p.hole_radius_mm]) {
    el("line", {x1: ex, y1: -ez, x2: r, y2: pz, stroke: "var(--eye)", "stroke-width": 1,
      "stroke-dasharray": "4 3", ...stroke}, layer);
  }
  el("circle", {id: "eye-marker", cx: ex, cy: -ez, r: EYE_RADIUS_PX * k, fill: "var(--eye)",
    stroke: "#fff", "stroke-width": 2, ...stroke, style: "cursor: grab"}, layer);
}

function drawFixed() {
  const svg = $("plan"), s = planSize(), c = app.camera, p = app.plan, k = c.mmPerPx;
  svg.replaceChildren();
  svg.setAttribute("viewBox",
    `${c.cx - s.w * k / 2} ${-c.cz - s.h * k / 2} ${s.w * k} ${s.h * k}`);
  const stroke = {"vector-effect": "non-scaling-stroke"};
  const font = 11 * k;
  // grid
  const step = niceStep(80 * k);
  const g = el("g", {stroke: "#e6e7ea", "stroke-width": 1}, svg);
  const x0 = c.cx - s.w * k / 2, x1 = c.cx + s.w * k / 2;
  const z0 = c.cz - s.h * k / 2, z1 = c.cz + s.h * k / 2;
  for (let x = Math.ceil(x0 / step) * step; x <= x1; x += step) {
    el("line", {x1: x, x2: x, y1: -z1, y2: -z0, ...stroke}, g);
  }
  for (let z = Math.ceil(z0 / step) * step; z <= z1; z += step) {
    el("line", {x1: x0, x2: x1, y1: -z, y2: -z, ...stroke}, g);
  }
  // sight-line zone at the nearest computed height
  const zone = app.scene.sight_lines, near = nearestZoneHeight();
  const lensesSwapped = app.outer !== "scene";
  if (zone && near && !lensesSwapped) {
    const cells = el("g", {opacity: 0.45}, svg);
    for (const pt of zone.points) {
      if (pt.h !== near.h) continue;
      const z = p.panel_z_mm - pt.d;
      el("rect", {x: pt.x - zone.step_x_mm / 2, y: -z - zone.step_d_mm / 2,
        width: zone.step_x_mm, height: zone.step_d_mm,
        fill: app.scene.classes[pt.class] ? app.scene.classes[pt.class].colour : "#999"}, cells);
    }
  }
  // background and hidden layers
  for (const layer of p.layers) {
    const colour = layer.role === "hidden" ? "var(--hidden)" : "#8a8f98";
    el("line", {x1: layer.left_mm, x2: layer.right_mm, y1: -layer.z_mm, y2: -layer.z_mm,
      stroke: colour, "stroke-width": layer.role === "hidden" ? 4 : 3, ...stroke}, svg);
    const t = el("text", {x: layer.right_mm + 4 * k, y: -layer.z_mm + font / 3,
      "font-size": font}, svg);
    t.textContent = `${layer.name} (${layer.role})`;
  }
  // tube, lenses, panel with its hole
  el("rect", {x: -p.tube_radius_mm, y: -p.tube_end_mm, width: 2 * p.tube_radius_mm,
    height: p.tube_end_mm - p.panel_z_mm, fill: "none", stroke: "var(--tube)",
    "stroke-width": 2, ...stroke}, svg);
  for (const lens of p.lenses) {
    el("rect", {x: -lens.radius_mm, y: -lens.back_z_mm, width: 2 * lens.radius_mm,
      height: Math.max(lens.back_z_mm - lens.front_z_mm, 2 * k), fill: "var(--lens)",
      "fill-opacity": 0.7, stroke: "#3d79b8", "stroke-width": 1, ...stroke}, svg);
  }
  const pz = -p.panel_z_mm;
  for (const [a, b] of [[-p.panel_half_width_mm, -p.hole_radius_mm],
    [p.hole_radius_mm, p.panel_half_width_mm]]) {
    el("line", {x1: a, x2: b, y1: pz, y2: pz, stroke: "#5a6170", "stroke-width": 5,
      ...stroke}, svg);
  }
  const label = el("text", {x: p.panel_half_width_mm + 4 * k, y: pz + font / 3,
    "font-size": font}, svg);
  label.textContent = `front panel, hole ${(2 * p.hole_radius_mm).toFixed(0)} mm`;
  // the scene's viewers; those within a few pixels of each other share one label
  const groups = [];
  for (const v of app.scene.viewers) {
    const x = v.lateral_mm, z = p.panel_z_mm - v.distance_mm;
    const near = groups.find((gr) => Math.hypot(gr.x - x, gr.z - z) < 14 * k);
    if (near) near.names.push(v.name); else groups.push({x, z, names: [v.name]});
    el("circle", {cx: x, cy: -z, r: 3.5 * k, fill: "#fff", stroke: "#777", "stroke-width": 1,
      ...stroke}, svg);
  }
  for (const gr of groups) {
    const t = el("text", {x: gr.x - 10 * k, y: -gr.z + font / 3, "font-size": font * 0.9,
      "text-anchor": "end"}, svg);
    t.textContent = gr.names.join(", ");
  }
  el("g", {id: "eye-layer"}, svg);  // the sight lines and the eye: see drawEye
  // scale bar
  const bar = niceStep(120 * k);
  const bx = c.cx - s.w * k / 2 + 12 * k, by = -(c.cz - s.h * k / 2) - 14 * k;
  el("line", {x1: bx, x2: bx + bar, y1: by, y2: by, stroke: "#222", "stroke-width": 2,
    ...stroke}, svg);
  const bt = el("text", {x: bx, y: by - 5 * k, "font-size": font}, svg);
  bt.textContent = bar >= 1000 ? `${bar / 1000} m` : `${bar} mm`;
  const note = $("zone-note");
  if (!zone) {
    note.textContent = "No sight-line map shown: start with --sight-lines FOLDER (the output " +
      "of cloakview sightlines) to shade where the effect works.";
  } else if (lensesSwapped) {
    note.textContent = "Sight-line map hidden: it was computed for the scene's own lenses.";
  } else {
    const named = near.name === `${near.h.toFixed(0)} mm` ? "" : ` (${near.name})`;
    note.replaceChildren(`Shaded: sight-line map at eye height ${near.h.toFixed(0)} mm` +
      `${named}, the computed height nearest the eye's.` +
      (zone.matches ? " " : ` Computed for ${zone.computed_for || "an unknown scene file"}, ` +
      "not this scene file. "));
    for (const [name, cls] of Object.entries(app.scene.classes)) {
      const key = document.createElement("span");
      key.className = "key";
      key.title = cls.meaning;
      key.style.setProperty("--swatch", cls.colour);
      key.textContent = name;
      note.append(key);
    }
  }
}

function planPoint(event) {
  const svg = $("plan");
  const pt = svg.createSVGPoint();
  pt.x = event.clientX; pt.y = event.clientY;
  const local = pt.matrixTransform(svg.getScreenCTM().inverse());
  return {lateral_mm: local.x, distance_mm: app.plan.panel_z_mm + local.y};
}

function moveEyeTo(point, event) {
  app.eye.lateral_mm = Math.round(point.lateral_mm);
  app.eye.distance_mm = Math.max(1, Math.round(point.distance_mm));
  eyeChanged(event);
}

// ---- the eye point and the frames -----------------------------------------------------
function showEye() {
  $("lateral").value = app.eye.lateral_mm;
  $("distance").value = app.eye.distance_mm;
  $("height").value = app.eye.height_mm;
  $("height-slider").value = app.eye.height_mm;
  $("height-text").textContent = `${app.eye.height_mm.toFixed(0)} mm`;
}

function eyeChanged(event) {
  keepEyeInView();
  showEye();
  queueDraw();
  const seq = ++app.seq;
  app.changedAt.set(seq, event && event.timeStamp ? event.timeStamp : performance.now());
  ask("preview", seq);
  scheduleFull();
}

function scheduleFull() {
  clearTimeout(app.restTimer);
  app.restTimer = setTimeout(() => ask("full", app.seq), REST_MS);
}

function request(quality) {
  return {...app.eye, outer: app.outer, inner: app.inner, quality, view: app.view};
}

function ask(quality, seq) {
  if (app.outer === "scene" ? app.inner !== "scene" : app.inner === "scene") {
    $("lens-note").textContent = "Choose both lenses from the inventory, or neither.";
    return;
  }
  app.wanted = {body: request(quality), seq};
  pump();
}

async function pump() {
  if (!app.wanted) return;
  // At most one preview in flight; a full frame in flight does not hold a new request
  // back (the server abandons it for the newer one).
  if (app.wanted.body.quality === "preview" && app.previewInFlight) return;
  const job = app.wanted;
  app.wanted = null;
  const preview = job.body.quality === "preview";
  if (preview) app.previewInFlight = job;
  $("status").textContent = preview ? "rendering preview..." : "rendering full quality...";
  try {
    job.sentAt = performance.now();
    const answer = await getJSON("/api/frame", {method: "POST",
      headers: {"Content-Type": "application/json"}, body: JSON.stringify(job.body)});
    job.answeredAt = performance.now();
    // The next preview may go while this one's picture is fetched and decoded.
    if (app.previewInFlight === job) { app.previewInFlight = null; pump(); }
    if (!answer.superseded && job.seq >= app.shownSeq) {
      await paint(answer, job);
    }
    showError("");
  } catch (error) {
    showError(error.message);
    $("status").textContent = "request refused";
  } finally {
    if (app.previewInFlight === job) app.previewInFlight = null;
    pump();
  }
}

async function showPicture(url) {
  // Decode off screen, then swap: the visible picture never shows a half-loaded frame.
  const picture = new Image();
  picture.alt = $("view").alt;
  picture.src = url;
  await picture.decode();
  return picture;
}

async function paint(answer, job) {
  const picture = await showPicture(answer.picture);
  const decodedAt = performance.now();
  if (job.seq < app.shownSeq) return;  // a newer frame was painted meanwhile
  picture.id = "view";
  $("view").replaceWith(picture);
  app.shownSeq = job.seq;
  for (const seq of app.changedAt.keys()) if (seq < job.seq) app.changedAt.delete(seq);
  app.painted = answer;
  if (answer.quality === "full") app.last = answer;
  showNumbers(answer);
  requestAnimationFrame(() => {
    const now = performance.now();
    const changed = app.changedAt.get(job.seq) || now;
    app.stats.painted.push({seq: job.seq, quality: answer.quality, frame: answer.frame,
      latency_ms: now - changed, server_s: answer.seconds,
      waited_ms: job.sentAt - changed, answer_ms: job.answeredAt - job.sentAt,
      picture_ms: decodedAt - job.answeredAt, paint_ms: now - decodedAt});
  });
}

function fmt(value, digits, unit = "") {
  return value === null || value === undefined ? "-" : `${value.toFixed(digits)}${unit}`;
}

function pct(value) { return value === null || value === undefined ? "-" : `${Math.round(100 * value)} %`; }

function showNumbers(answer) {
  const m = answer.metrics, full = answer.quality === "full";
  const badge = $("quality");
  badge.textContent = full
    ? `full: ${answer.size_px[0]} x ${answer.size_px[1]}, ${answer.wavelengths_nm.length} ` +
      `wavelengths, ${app.scene.supersample}x${app.scene.supersample} samples, ` +
      `${answer.seconds.toFixed(2)} s`
    : `preview: ${answer.size_px[0]} x ${answer.size_px[1]}, 1 wavelength, ` +
      `${(1000 * answer.seconds).toFixed(0)} ms`;
  badge.className = full ? "badge full" : "badge";
  const panel = $("sight");
  if (!m) {
    // A preview is a picture only: the numbers wait for the pointer to rest.
    panel.classList.add("moving");
    $("status").textContent = "preview (numbers and full quality when the pointer rests)";
    return;
  }
  panel.classList.remove("moving");
  const verdict = $("verdict");
  verdict.textContent = m.verdict;
  verdict.dataset.verdictClass = m.verdict_class;
  const cls = app.scene.classes[m.verdict_class];
  verdict.style.background = cls ? cls.colour : "#888";
  verdict.title = cls ? cls.meaning : "";
  const shift = m.background_shift_arcmin;
  const rows = [
    ["object's place showing background", pct(m.replaced_fraction)],
    ["... dark (tube or lens mount)", pct(m.blocked_fraction)],
    ["... still showing the object", pct(m.showing_fraction)],
    ["through-window radius", fmt(m.window_deg, 2, " deg")],
    ["through-window on the panel", fmt(m.window_panel_mm, 0, " mm across")],
    ["background likeness (SSIM)", fmt(m.background_ssim, 2)],
    ["background shift, median", shift ? fmt(shift.median, 1, " arcmin") : "-"],
    ["colour fringe (blue to red)", fmt(m.color_fringe_arcmin, 1, " arcmin")],
    ["light through the lenses", pct(m.transmittance)],
    ["eye point, room [mm]", answer.eye_mm.map((v) => v.toFixed(0)).join(", ")],
  ];
  const dl = $("numbers");
  dl.replaceChildren();
  for (const [k, v] of rows) {
    const dt = document.createElement("dt"); dt.textContent = k;
    const dd = document.createElement("dd"); dd.textContent = v;
    dl.append(dt, dd);
  }
  const advice = $("advice");
  advice.replaceChildren(...(m.advice || []).map((line) => {
    const li = document.createElement("li"); li.textContent = line; return li;
  }));
  $("status").textContent = "full quality";
}

// ---- controls ------------------------------------------------------------------------
function setHeight(value, event) {
  app.eye.height_mm = Math.round(value);
  eyeChanged(event);
}

function buildHeightMarks() {
  const slider = $("height-slider"), list = $("height-marks"), ticks = $("height-ticks");
  const lo = Number(slider.min), hi = Number(slider.max);
  const marks = new Map();  // height -> names
  const add = (h, name) => marks.set(h, [...(marks.get(h) || []), name]);
  for (const [name, h] of Object.entries(app.scene.standard_heights_mm)) add(h, name);
  for (const v of app.scene.viewers) add(Math.round(v.height_mm), v.name);
  const heights = [...marks.keys()].sort((a, b) => a - b);
  list.replaceChildren();
  ticks.replaceChildren();
  const jumps = $("height-jumps");
  jumps.replaceChildren();
  const standard = Object.values(app.scene.standard_heights_mm);
  let row = 0;
  for (const h of heights) {
    const names = marks.get(h);
    const option = document.createElement("option");
    option.value = h; option.label = names.join(", ");
    list.appendChild(option);
    const x = `${(100 * (h - lo) / (hi - lo)).toFixed(2)}%`;
    const named = standard.includes(h);
    el("line", {x1: x, x2: x, y1: 0, y2: named ? 8 + 11 * row : 6,
      stroke: named ? "#555" : "#e6782a", "stroke-width": named ? 1 : 2}, ticks);
    if (named) {
      const t = el("text", {x, y: 18 + 11 * row, "text-anchor": "middle"}, ticks);
      t.textContent = names.filter((n) => app.scene.standard_heights_mm[n] === h).join(", ");
      row = 1 - row;
    }
    const button = document.createElement("button");
    button.type = "button";
    button.textContent = `${h.toFixed(0)} mm: ${names.join(", ")}`;
    button.addEventListener("click", (e) => setHeight(h, e));
    jumps.appendChild(button);
  }
}

function buildViewerJumps() {
  const box = $("viewer-jumps");
  box.replaceChildren();
  const title = document.createElement("span");
  title.className = "quiet";
  title.textContent = "Stand where a scene viewer stands:";
  box.appendChild(title);
  for (const v of app.scene.viewers) {
    const b = document.createElement("button");
    b.type = "button";
    b.textContent = v.name;
    b.addEventListener("click", (e) => {
      app.eye = {lateral_mm: Math.round(v.lateral_mm), distance_mm: Math.round(v.distance_mm),
        height_mm: Math.round(v.height_mm)};
      eyeChanged(e);
    });
    box.appendChild(b);
  }
}

function buildLensPickers() {
  for (const id of ["outer", "inner"]) {
    const select = $(id);
    select.replaceChildren();
    const own = document.createElement("option");
    own.value = "scene"; own.textContent = "the scene's own lenses";
    select.appendChild(own);
    for (const item of app.scene.inventory) {
      const o = document.createElement("option");
      o.value = item.id;
      o.textContent = `${item.id}: f ${item.focal_length_mm} mm, ${item.diameter_mm} mm across` +
        ` (${item.quantity} in stock)`;
      select.appendChild(o);
    }
    select.disabled = app.scene.inventory.length === 0;
    select.addEventListener("change", lensesChanged);
  }
  $("lens-note").textContent = app.scene.inventory.length ? lengthNote()
    : "Start with --inventory FILE to try lenses from an inventory.";
}

function lengthNote() {
  return `Device length ${app.plan.length_mm.toFixed(0)} mm, panel to tube end.`;
}

async function lensesChanged(event) {
  app.outer = $("outer").value;
  app.inner = $("inner").value;
  if ((app.outer === "scene") !== (app.inner === "scene")) {
    $("lens-note").textContent = "Choose both lenses from the inventory, or neither.";
    return;
  }
  try {
    app.plan = await getJSON(`/api/plan?outer=${encodeURIComponent(app.outer)}` +
      `&inner=${encodeURIComponent(app.inner)}`);
    $("lens-note").textContent = lengthNote();
    showError("");
  } catch (error) {
    showError(error.message);
    $("lens-note").textContent = "These lenses cannot make a device for this scene.";
    return;
  }
  eyeChanged(event);
}

function nudge(event) {
  const tag = (event.target.tagName || "").toLowerCase();
  if (["input", "select", "textarea", "button"].includes(tag)) return;
  const step = event.shiftKey ? BIG_NUDGE_MM : NUDGE_MM;
  const moves = {ArrowLeft: ["lateral_mm", -step], ArrowRight: ["lateral_mm", step],
    ArrowUp: ["distance_mm", -step], ArrowDown: ["distance_mm", step],
    PageUp: ["height_mm", step], PageDown: ["height_mm", -step]};
  const move = moves[event.key];
  if (!move) return;
  event.preventDefault();
  app.eye[move[0]] = Math.round(app.eye[move[0]] + move[1]);
  if (move[0] === "distance_mm") app.eye.distance_mm = Math.max(1, app.eye.distance_mm);
  eyeChanged(event);
}

async function saveView() {
  const button = $("save");
  button.disabled = true;
  $("save-result").textContent = "rendering and saving at full quality...";
  try {
    const body = {...request("full"), name: $("save-name").value.trim() || null};
    const saved = await getJSON("/api/save", {method: "POST",
      headers: {"Content-Type": "application/json"}, body: JSON.stringify(body)});
    $("save-result").textContent = `Saved "${saved.name}" (${saved.verdict}) to ` +
      `${saved.folder}; the viewer entry below was added to viewers.toml there.`;
    $("save-entry").textContent = saved.viewer_entry;
    $("save-entry").hidden = false;
    $("save-name").value = "";
    showError("");
  } catch (error) {
    $("save-result").textContent = "Not saved.";
    showError(error.message);
  } finally {
    button.disabled = false;
  }
}

function wirePlan() {
  const svg = $("plan");
  svg.addEventListener("pointerdown", (event) => {
    svg.setPointerCapture(event.pointerId);
    app.dragging = true;
    moveEyeTo(planPoint(event), event);
  });
  svg.addEventListener("pointermove", (event) => {
    if (app.dragging) moveEyeTo(planPoint(event), event);
  });
  const release = () => {
    if (!app.dragging) return;
    app.dragging = false;
    clearTimeout(app.restTimer);
    ask("full", app.seq);  // let go: no need to wait for the pointer to rest
  };
  svg.addEventListener("pointerup", release);
  svg.addEventListener("pointercancel", release);
  svg.addEventListener("wheel", (event) => {
    event.preventDefault();
    const before = planPoint(event);
    const factor = event.deltaY > 0 ? 1.25 : 0.8;
    zoomAround(before, factor);
  }, {passive: false});
  $("zoom-in").addEventListener("click", () => zoomAround(null, 0.5));
  $("zoom-out").addEventListener("click", () => zoomAround(null, 2));
  $("zoom-fit").addEventListener("click", () => { fitWhole(); drawPlan(); });
  $("zoom-eye").addEventListener("click", () => { zoomToEye(); drawPlan(); });
  window.addEventListener("resize", drawPlan);
}

function zoomAround(point, factor) {
  const c = app.camera;
  const k = Math.min(Math.max(c.mmPerPx * factor, 0.05), 200);
  if (point) {
    const z = app.plan.panel_z_mm - point.distance_mm;
    c.cx = point.lateral_mm + (c.cx - point.lateral_mm) * k / c.mmPerPx;
    c.cz = z + (c.cz - z) * k / c.mmPerPx;
  }
  c.mmPerPx = k;
  drawPlan();
}

function wireControls() {
  $("height-slider").addEventListener("input", (e) => setHeight(Number(e.target.value), e));
  for (const [id, key] of [["lateral", "lateral_mm"], ["distance", "distance_mm"],
    ["height", "height_mm"]]) {
    $(id).addEventListener("change", (e) => {
      const value = Number(e.target.value);
      if (e.target.value === "" || !Number.isFinite(value)) {
        showError(`${key}: must be a number [mm]`);
        return;
      }
      app.eye[key] = value;
      eyeChanged(e);
    });
  }
  for (const radio of document.querySelectorAll("input[name=view]")) {
    radio.addEventListener("change", (e) => {
      app.view = e.target.value;
      const shown = app.painted;
      if (shown && shown.quality === "full" && shown.views.includes(app.view)) {
        showPicture(`/api/frame/${shown.frame}/${app.view}.jpg`).then((picture) => {
          picture.id = "view";
          $("view").replaceWith(picture);
        }).catch((error) => showError(error.message));
      } else {
        ask("preview", app.seq);
        scheduleFull();
      }
      showViewHelp();
    });
  }
  document.addEventListener("keydown", nudge);
  $("save").addEventListener("click", saveView);
}

function showViewHelp() {
  const help = {
    cloaked: "The exhibit as built, through the lenses.",
    naked: "The same housing and hidden object with the lenses taken out.",
    vanish: "As built, with the hidden object's outline as seen without lenses: where it " +
      "vanishes and where it still shows.",
    difference: "Heat map: how far the view departs from the room with no device.",
    reference: "The room with no device and no hidden object: what a perfect cloak shows.",
  };
  $("view-help").textContent = help[app.view];
}

async function start() {
  try {
    app.scene = await getJSON("/api/scene");
  } catch (error) {
    showError(error.message);
    return;
  }
  const s = app.scene;
  app.plan = s.plan;
  document.title = `cloakview live: ${s.title}`;
  $("title").textContent = s.title;
  $("scene-file").textContent = `${s.scene_file}; saved views go to ${s.out}`;
  const v = s.base_viewer;
  app.eye = {lateral_mm: Math.round(v.lateral_mm), distance_mm: Math.round(v.distance_mm),
    height_mm: Math.round(v.height_mm)};
  $("definition").textContent = `Verdict: ${s.works_definition}.`;
  $("cautions").replaceChildren(...s.cautions.map((line) => {
    const li = document.createElement("li"); li.textContent = line; return li;
  }));
  buildHeightMarks();
  buildViewerJumps();
  buildLensPickers();
  wirePlan();
  wireControls();
  showViewHelp();
  fitWhole();
  eyeChanged(null);
}

document.addEventListener("DOMContentLoaded", start);
