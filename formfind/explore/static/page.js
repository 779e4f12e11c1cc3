// formfind explore: the page asks the local server for an answer after each change (debounced), drops
// answers older than the last request, and draws them. No mechanics here: every number comes from the
// server, which runs the library's find, analyse and check.
"use strict";

const DEBOUNCE_MS = 60;
const SVG_NS = "http://www.w3.org/2000/svg";
const THRUST_COLOURS = ["#c2571a", "#28579e", "#1b7f6b", "#8a5a00"];
const TRIAL_COLOUR = "#7a4f9a";

const page = { settings: null, ranges: null, sent: 0, timer: null, answer: null, study: null,
  client: Date.now().toString(36) + Math.random().toString(36).slice(2, 10) };

function $(id) { return document.getElementById(id); }

function fmt(value, digits = 4) {
  if (value === null || value === undefined || !Number.isFinite(value)) return "-";
  if (value !== 0 && (Math.abs(value) >= 1e6 || Math.abs(value) < 1e-3)) return value.toExponential(2);
  return Number(value.toPrecision(digits)).toString();
}

async function post(path, body) {
  const response = await fetch(path, {
    method: "POST", headers: { "Content-Type": "application/json" }, body: JSON.stringify(body),
  });
  const type = response.headers.get("Content-Type") || "";
  if (type.startsWith("application/json")) return { response, data: await response.json() };
  return { response, data: null };
}

// ------------------------------------------------------------------------------------ controls
function setRange(key, low, high) {
  const range = $(key + "-range");
  if (!range) return;
  range.min = low; range.max = high; range.step = (high - low) / 400;
}

function positionRanges() {
  const span = page.settings.span_m;
  for (const key of ["trial_from_m", "trial_to_m", "trial_x_m"]) setRange(key, 0, span);
}

function showControls() {
  const s = page.settings;
  for (const input of document.querySelectorAll("[data-key]")) {
    const key = input.dataset.key;
    if (input.type === "checkbox") input.checked = Boolean(s[key]);
    else if (input.type === "range" || input.type === "number") {
      if (document.activeElement !== input || input.type === "range") input.value = s[key];
    } else input.value = s[key];
  }
  for (const radio of document.querySelectorAll("input[name=trial]")) radio.checked = radio.value === s.trial;
  $("trial-line").classList.toggle("shown", s.trial === "line");
  $("trial-point").classList.toggle("shown", s.trial === "point");
  $("trial-common").classList.toggle("shown", s.trial !== "none");
}

function onControl(event) {
  const input = event.target;
  const key = input.dataset.key;
  if (!key) return;
  let value;
  if (input.type === "checkbox") value = input.checked;
  else if (input.type === "range" || input.type === "number") {
    value = input.value.trim() === "" ? null : Number(input.value);  // the server names a bad value
    if (Number.isNaN(value)) value = null;
  } else value = input.value;
  if (key === "span_m" && Number.isFinite(value) && value > 0 && Number.isFinite(page.settings.span_m)) {
    const k = value / page.settings.span_m;  // the trial load keeps its place along the span
    for (const t of ["trial_from_m", "trial_to_m", "trial_x_m"]) page.settings[t] *= k;
    page.settings.span_m = value;
    positionRanges();
  }
  page.settings[key] = value;
  showControls();
  schedule();
}

function onTrialKind(event) {
  page.settings.trial = event.target.value;
  showControls();
  schedule();
}

// ------------------------------------------------------------------------------------- requests
function schedule() {
  clearTimeout(page.timer);
  page.timer = setTimeout(ask, DEBOUNCE_MS);
}

async function ask() {
  const seq = ++page.sent;
  const started = performance.now();
  $("status").textContent = "finding the axis…";
  let reply;
  try {
    reply = await post("/api/answer", { client: page.client, seq, settings: page.settings });
  } catch (err) {
    if (seq === page.sent) showError("the server does not answer: is formfind explore still running?");
    return;
  }
  const data = reply.data;
  if (!data || data.stale || seq !== page.sent) return;  // a newer request is on its way: drop this one
  if (!data.ok) {
    showError(data.error);
    $("status").textContent = "not answered: see the message";
    return;
  }
  hideError();
  page.answer = data;
  draw(data);
  const ms = Math.round(performance.now() - started);
  $("status").textContent = `answered in ${ms} ms (server ${Math.round(1000 * data.summary.seconds)} ms)`;
  document.body.dataset.answered = String(seq);
}

function showError(message) {
  const box = $("error");
  box.textContent = message + " (the drawing below is of the last settings that could be answered)";
  box.hidden = false;
  document.body.classList.add("unanswered");
}

function hideError() {
  $("error").hidden = true;
  $("error").textContent = "";
  document.body.classList.remove("unanswered");
}

// ---------------------------------------------------------------------------------------- drawing
function el(name, attrs, parent) {
  const node = document.createElementNS(SVG_NS, name);
  for (const [k, v] of Object.entries(attrs || {})) node.setAttribute(k, v);
  if (parent) parent.appendChild(node);
  return node;
}

function text(parent, x, y, content, attrs) {
  const t = el("text", Object.assign({ x, y }, attrs || {}), parent);
  t.textContent = content;
  return t;
}

function pathOf(points, map) {
  let d = "";
  let pen = false;
  for (const p of points) {
    if (!p || p[0] === null || p[1] === null) { pen = false; continue; }
    const [x, y] = map(p[0], p[1]);
    d += (pen ? "L" : "M") + x.toFixed(1) + " " + y.toFixed(1);
    pen = true;
  }
  return d;
}

function zip(xs, ys) { return xs.map((x, i) => [x, ys[i]]); }

function elevationFrame(data, svg) {
  const box = svg.viewBox.baseVal;
  const pts = data.intrados_m.concat(data.extrados_m).filter(Boolean);
  let x0 = Math.min(...pts.map(p => p[0])), x1 = Math.max(...pts.map(p => p[0]));
  let y0 = Math.min(0, ...pts.map(p => p[1])), y1 = Math.max(...pts.map(p => p[1]));
  const room = 0.08 * (x1 - x0);
  x0 -= room; x1 += room; y1 += 0.18 * (x1 - x0) * box.height / box.width; y0 -= 0.04 * (x1 - x0);
  const k = Math.min((box.width - 40) / (x1 - x0), (box.height - 50) / (y1 - y0));
  const ox = 20 + ((box.width - 40) - k * (x1 - x0)) / 2;
  const map = (x, y) => [ox + k * (x - x0), box.height - 30 - k * (y - y0)];
  const unmap = (px) => x0 + (px - ox) / k;
  return { map, unmap, k, box };
}

function drawElevation(data) {
  const svg = $("elevation");
  svg.replaceChildren();
  const frame = elevationFrame(data, svg);
  const { map, k, box } = frame;
  page.frame = frame;
  const outline = data.intrados_m.concat(data.extrados_m.slice().reverse());
  el("path", { d: pathOf(outline, map) + "Z", class: "rib" }, svg);
  const axis = zip(data.axis.x_m, data.axis.y_m);
  data.thrust_lines.forEach((line, i) => {
    const colour = line.name === "trial" ? TRIAL_COLOUR : THRUST_COLOURS[i % THRUST_COLOURS.length];
    el("path", { d: pathOf(line.points, map), class: "thrust", stroke: colour }, svg);
  });
  el("path", { d: pathOf(axis, map), class: "axis" }, svg);
  const first = axis[0], last = axis[axis.length - 1];
  for (const p of [first, last]) {
    const [px, py] = map(p[0], p[1]);
    el("path", { d: `M${px} ${py}l-8 13h16z`, class: "support" }, svg);
    el("line", { x1: px - 16, y1: py + 13, x2: px + 16, y2: py + 13, class: "ground" }, svg);
  }
  if (data.hinge_m) {
    const [hx, hy] = map(data.hinge_m[0], data.hinge_m[1]);
    el("circle", { cx: hx, cy: hy, r: 4.5, class: "hinge" }, svg);
  }
  drawTrialLoad(svg, data, frame);
  // legend and scale
  let lx = 24;
  const ly = 18;
  const items = [["axis", "#1f2933", false]].concat(data.thrust_lines.map((l, i) =>
    ["thrust line, " + l.name, l.name === "trial" ? TRIAL_COLOUR : THRUST_COLOURS[i % THRUST_COLOURS.length], true]));
  for (const [label, colour, dashed] of items) {
    el("line", { x1: lx, y1: ly, x2: lx + 22, y2: ly, stroke: colour, "stroke-width": 1.6,
      "stroke-dasharray": dashed ? "6 4" : "none" }, svg);
    const t = text(svg, lx + 27, ly + 4, label, { class: "legend" });
    lx += 40 + 6.4 * label.length;
    void t;
  }
  const metres = niceStep((box.width / 5) / k);
  const [sx, sy] = [box.width - 30 - metres * k, box.height - 10];
  el("line", { x1: sx, y1: sy, x2: sx + metres * k, y2: sy, stroke: "#1f2933", "stroke-width": 2 }, svg);
  text(svg, sx, sy - 5, `${fmt(metres)} m`, { class: "tick" });
}

function drawTrialLoad(svg, data, frame) {
  const s = data.settings;
  if (s.trial === "none") return;
  const { map } = frame;
  const xs = data.axis.x_m, ys = data.axis.y_m;
  const yAt = (x) => {
    let i = 1;
    while (i < xs.length - 1 && xs[i] < x) i++;
    const t = (x - xs[i - 1]) / ((xs[i] - xs[i - 1]) || 1);
    return ys[i - 1] + t * (ys[i] - ys[i - 1]);
  };
  const top = Math.max(...data.extrados_m.filter(Boolean).map(p => p[1]));
  const g = el("g", { class: "load" }, svg);
  const arrow = (x, size) => {
    const [px, py] = map(x, yAt(x));
    const [, pt] = map(x, top);
    const y1 = Math.min(pt - 6, py - 8);
    el("line", { x1: px, y1: y1 - size, x2: px, y2: py - 3, "stroke-width": 1.4 }, g);
    el("path", { d: `M${px} ${py - 2}l-4 -8h8z` }, g);
    return [px, y1 - size];
  };
  if (s.trial === "line") {
    const a = Math.min(s.trial_from_m, s.trial_to_m), b = Math.max(s.trial_from_m, s.trial_to_m);
    const count = Math.max(2, Math.round((b - a) / (xs[xs.length - 1] - xs[0]) * 16));
    const heads = [];
    for (let i = 0; i <= count; i++) heads.push(arrow(a + (b - a) * i / count, 14));
    el("line", { x1: heads[0][0], y1: heads[0][1], x2: heads[heads.length - 1][0], y2: heads[heads.length - 1][1],
      "stroke-width": 1.4 }, g);
    text(g, heads[0][0], heads[0][1] - 5, `${fmt(s.trial_kN_m)} kN/m × ${fmt(s.trial_factor)}`, { class: "legend" });
  } else {
    const [px, py] = arrow(s.trial_x_m, 34);
    text(g, px + 6, py + 10, `${fmt(s.trial_kN)} kN × ${fmt(s.trial_factor)}`, { class: "legend" });
    const handle = el("rect", { x: px - 12, y: py - 4, width: 24, height: 44, fill: "transparent", stroke: "none",
      class: "load-handle" }, g);
    handle.addEventListener("pointerdown", startDrag);
  }
}

function startDrag(event) {
  event.preventDefault();
  const svg = $("elevation");
  svg.setPointerCapture(event.pointerId);
  const move = (e) => {
    const box = svg.getBoundingClientRect();
    const px = (e.clientX - box.left) * svg.viewBox.baseVal.width / box.width;
    const x = Math.min(page.settings.span_m, Math.max(0, page.frame.unmap(px)));
    page.settings.trial_x_m = Number(x.toFixed(3));
    showControls();
    schedule();
  };
  const stop = () => {
    svg.removeEventListener("pointermove", move);
    svg.removeEventListener("pointerup", stop);
  };
  svg.addEventListener("pointermove", move);
  svg.addEventListener("pointerup", stop);
}

function niceStep(value) {
  const p = Math.pow(10, Math.floor(Math.log10(value)));
  for (const m of [1, 2, 5, 10]) if (m * p >= value) return m * p;
  return 10 * p;
}

function drawMoment(data) {
  const svg = $("moment");
  svg.replaceChildren();
  const box = svg.viewBox.baseVal;
  const xs = data.axis.x_m;
  const hi = data.moment_kNm.max, lo = data.moment_kNm.min, trial = data.moment_kNm.trial;
  const values = hi.concat(lo, trial || []).filter(v => v !== null);
  const top = Math.max(1e-9, ...values.map(Math.abs));
  const left = 64, right = box.width - 16, mid = box.height / 2, half = box.height / 2 - 18;
  const x0 = xs[0], x1 = xs[xs.length - 1];
  const map = (x, m) => [left + (right - left) * (x - x0) / (x1 - x0), mid - half * m / top];
  const band = zip(xs, hi).concat(zip(xs, lo).reverse());
  el("path", { d: pathOf(band, map) + "Z", class: "band" }, svg);
  el("line", { x1: left, y1: mid, x2: right, y2: mid, class: "zero" }, svg);
  if (trial) el("path", { d: pathOf(zip(xs, trial), map), class: "trial-m" }, svg);
  const step = niceStep(top / 3);
  for (let m = -Math.floor(top / step) * step; m <= top + 1e-9; m += step) {
    const [, y] = map(x0, m);
    el("line", { x1: left - 4, y1: y, x2: left, y2: y, class: "zero" }, svg);
    text(svg, left - 8, y + 4, fmt(m), { class: "tick", "text-anchor": "end" });
  }
  text(svg, left - 58, 12, "M (kNm)", { class: "tick" });
  const xstep = niceStep((x1 - x0) / 6);
  for (let x = 0; x <= x1 + 1e-9; x += xstep) {
    const [px] = map(x, 0);
    text(svg, px, box.height - 3, `${fmt(x)}`, { class: "tick", "text-anchor": "middle" });
  }
  text(svg, right, 12, "x (m)", { class: "tick", "text-anchor": "end" });
}

function drawSummary(data) {
  const s = data.summary;
  $("thrust").textContent = `${fmt(s.thrust_kN)} kN`;
  $("peak").textContent = `${fmt(s.peak_moment_kNm)} kNm (${s.peak_moment_state})`;
  $("buckling").textContent = fmt(s.buckling_factor);
  $("utilisation").textContent = s.worst_utilisation === null ? "-" : `${fmt(s.worst_utilisation, 3)} (${s.worst_check})`;
  const verdict = $("verdict");
  verdict.textContent = s.verdict === "pass" ? "all checks pass" : "some checks fail";
  verdict.className = "value " + s.verdict;
  $("gap").textContent = s.gap === null ? `- (${s.method})` : `${fmt(100 * s.gap, 2)} % (${s.method})`;
  const notes = $("notes");
  notes.replaceChildren();
  for (const note of data.notes) {
    const li = document.createElement("li");
    li.textContent = note;
    notes.appendChild(li);
  }
  const body = $("checks").tBodies[0];
  body.replaceChildren();
  for (const row of data.checks) {
    const tr = document.createElement("tr");
    const cells = [row.name, fmt(row.value), fmt(row.limit), row.unit, fmt(row.utilisation, 3), row.governing, row.verdict];
    cells.forEach((c, i) => {
      const td = document.createElement("td");
      td.textContent = c;
      if (i === 1 || i === 2 || i === 4) td.className = "num";
      if (i === 6) td.className = row.verdict;
      tr.appendChild(td);
    });
    body.appendChild(tr);
  }
}

function drawStudy() {
  const points = page.study;
  if (!points) return;
  $("study-figure").hidden = false;
  const svg = $("study");
  svg.replaceChildren();
  const box = svg.viewBox.baseVal;
  const ok = points.filter(p => p.span_m !== null && p.rise_over_span !== null);
  const spans = ok.map(p => p.span_m), ratios = ok.map(p => p.rise_over_span);
  let s0 = Math.min(...spans), s1 = Math.max(...spans), r0 = Math.min(...ratios), r1 = Math.max(...ratios);
  if (s1 - s0 < 1e-9) { s0 -= 1; s1 += 1; }
  if (r1 - r0 < 1e-9) { r0 -= 0.01; r1 += 0.01; }
  const left = 64, right = box.width - 20, topY = 30, bottom = box.height - 34;
  const map = (s, r) => [left + (right - left) * (s - s0) / (s1 - s0), bottom - (bottom - topY) * (r - r0) / (r1 - r0)];
  el("line", { x1: left, y1: bottom, x2: right, y2: bottom, class: "zero" }, svg);
  el("line", { x1: left, y1: topY, x2: left, y2: bottom, class: "zero" }, svg);
  text(svg, right, box.height - 4, "span (m)", { class: "tick", "text-anchor": "end" });
  text(svg, left + 6, topY - 4, "rise/span", { class: "tick" });
  let lx = right - 330;
  for (const [label, colour] of [["all checks pass", "#1b7f6b"], ["a check fails", "#b3261e"],
    ["no axis (hover for why)", "#9aa5b1"]]) {
    el("circle", { cx: lx, cy: topY - 8, r: 5, fill: colour }, svg);
    text(svg, lx + 9, topY - 4, label, { class: "legend" });
    lx += 24 + 6.2 * label.length;
  }
  for (const v of [s0, s1]) { const [px] = map(v, r0); text(svg, px, bottom + 16, fmt(v), { class: "tick", "text-anchor": "middle" }); }
  for (const v of [r0, r1]) { const [, py] = map(s0, v); text(svg, left - 6, py + 4, fmt(v, 3), { class: "tick", "text-anchor": "end" }); }
  for (const p of ok) {
    const [px, py] = map(p.span_m, p.rise_over_span);
    const colour = p.verdict === "pass" ? "#1b7f6b" : p.verdict === "fail" ? "#b3261e" : "#9aa5b1";
    const c = el("circle", { cx: px, cy: py, r: 6, fill: colour, class: "study-point" }, svg);
    const title = el("title", {}, c);
    title.textContent = `span ${fmt(p.span_m)} m, rise/span ${fmt(p.rise_over_span, 3)}: ` +
      (p.verdict ? `${p.verdict}, peak |M| ${fmt(p.peak_M_all_kNm)} kNm, thrust ${fmt(p.max_thrust_kN)} kN`
        : `${p.status}: ${p.reason || "no axis"}`);
    c.addEventListener("click", () => {
      page.settings.span_m = p.span_m;
      page.settings.rise_m = p.rise_m;
      positionRanges();
      showControls();
      drawStudy();
      schedule();
    });
  }
  const s = page.settings;
  const [cx, cy] = map(s.span_m, s.rise_m / s.span_m);
  el("circle", { cx, cy, r: 10, class: "study-current" }, svg);
}

function draw(data) {
  drawElevation(data);
  drawMoment(data);
  drawSummary(data);
  drawStudy();
}

// ------------------------------------------------------------------------------------ buttons
async function save() {
  const { data } = await post("/api/save", { settings: page.settings });
  if (data && data.ok) { $("saved").textContent = `saved ${data.path}`; hideError(); }
  else showError(data ? data.error : "the case file could not be saved");
}

async function download() {
  const { response, data } = await post("/api/dxf", { settings: page.settings });
  if (!response.ok || data) { showError(data ? data.error : "the drawing could not be made"); return; }
  const blob = await response.blob();
  const link = document.createElement("a");
  const disposition = response.headers.get("Content-Disposition") || "";
  const match = /filename="([^"]+)"/.exec(disposition);
  link.download = match ? match[1] : "axis.dxf";
  link.href = URL.createObjectURL(blob);
  document.body.appendChild(link);
  link.click();
  setTimeout(() => { URL.revokeObjectURL(link.href); link.remove(); }, 1000);
}

// ------------------------------------------------------------------------------------- start
async function start() {
  const response = await fetch("/api/start");
  const data = await response.json();
  page.settings = data.settings;
  page.ranges = data.ranges;
  page.study = data.study;
  $("case-title").textContent = `${data.file}: ${data.title || data.case}`;
  $("caution").textContent = data.caution;
  for (const [key, r] of Object.entries(data.ranges)) setRange(key, r.min, r.max);
  positionRanges();
  showControls();
  for (const input of document.querySelectorAll("[data-key]")) {
    input.addEventListener(input.type === "number" ? "change" : "input", onControl);
  }
  for (const radio of document.querySelectorAll("input[name=trial]")) radio.addEventListener("change", onTrialKind);
  $("save").addEventListener("click", save);
  $("download").addEventListener("click", download);
  ask();
}

start();
