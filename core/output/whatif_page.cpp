// The what-if page served at GET / by `spurcast serve`: one HTML document with inline CSS and
// script; it fetches only this server's own /api routes.
#include <string>

#include "core/output/whatif.hpp"

namespace spurcast {

const std::string& whatif_page_html() {
  static const std::string page = R"spurcast_page(<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>spurcast what-if</title>
<style>
:root { --ink:#1d2630; --muted:#5d6b78; --line:#d5dde4; --panel:#f4f7f9; --accent:#0f7b74;
        --pass:#2f7d32; --marginal:#b26a00; --fail:#b3261e; --none:#6b6b6b; }
* { box-sizing: border-box; }
body { margin:0; font:14px/1.45 system-ui, sans-serif; color:var(--ink); background:#fff; }
header { padding:10px 18px; background:#22313f; color:#fff; display:flex; gap:16px; align-items:baseline; flex-wrap:wrap; }
header h1 { font-size:17px; margin:0; font-weight:600; }
header .file { color:#b9c7d3; font-size:13px; }
main { display:grid; grid-template-columns:minmax(320px, 430px) 1fr; gap:18px; padding:16px 18px; }
@media (max-width: 800px) { main { grid-template-columns:1fr; } }
section { background:var(--panel); border:1px solid var(--line); border-radius:6px; padding:12px 14px; }
h2 { font-size:14px; margin:0 0 8px; text-transform:uppercase; letter-spacing:.04em; color:var(--muted); }
.control { display:grid; grid-template-columns:1fr 118px; gap:2px 8px; margin:0 0 10px; }
.control label { grid-column:1 / 3; font-size:13px; }
.control label.changed::after { content:" (changed)"; color:var(--accent); }
.control input[type=range] { width:100%; accent-color:var(--accent); }
.control input[type=text], .control select { width:100%; font:inherit; padding:2px 4px; border:1px solid var(--line); border-radius:3px; }
.buttons { display:flex; gap:8px; margin-top:6px; }
button { font:inherit; padding:5px 12px; border:1px solid var(--accent); background:#fff; color:var(--accent); border-radius:4px; cursor:pointer; }
button.primary { background:var(--accent); color:#fff; }
#verdict { font-size:22px; font-weight:700; padding:8px 12px; border-radius:5px; color:#fff; background:var(--none); display:inline-block; }
#verdict.pass { background:var(--pass); } #verdict.marginal { background:var(--marginal); } #verdict.fail { background:var(--fail); }
#status { color:var(--muted); margin-left:10px; }
#status.error { color:var(--fail); font-weight:600; }
#status.busy { color:var(--accent); }
#answer.stale table, #answer.stale #verdict, #answer.stale #worst-line, #answer.stale #plots { opacity:.5; transition:opacity .15s; }
table { border-collapse:collapse; width:100%; margin:6px 0 14px; background:#fff; }
th, td { text-align:left; padding:3px 8px; border-bottom:1px solid var(--line); font-variant-numeric:tabular-nums; }
th { font-weight:600; color:var(--muted); font-size:12px; }
td.num { text-align:right; }
.tag { padding:1px 7px; border-radius:9px; color:#fff; font-size:12px; background:var(--none); }
.tag.pass, .tag.clear { background:var(--pass); } .tag.marginal, .tag.watch { background:var(--marginal); }
.tag.fail, .tag.noisy { background:var(--fail); }
.note { color:var(--muted); font-size:12px; }
#plots figure { margin:0 0 12px; }
#plots svg { display:block; max-width:100%; height:auto; background:#fff; }
</style>
</head>
<body>
<header><h1>spurcast what-if</h1><span class="file" id="file"></span></header>
<main>
<section>
  <h2>Change the design</h2>
  <div id="controls"><p class="note">loading the scenario…</p></div>
  <div class="buttons">
    <button type="button" id="reset">reset</button>
    <button type="button" class="primary" id="save">save as…</button>
  </div>
  <p class="note">Sliders span a quarter to four times the scenario's value; type any value with its unit in
  the field. "save as…" downloads the changed scenario through the browser; the server writes no file.</p>
</section>
<section id="answer">
  <h2>Answer</h2>
  <div><span id="verdict">…</span><span id="status"></span></div>
  <p id="worst-line"></p>
  <div id="plots"></div>
  <h2>Worst margin per detector</h2>
  <table><thead><tr><th>detector</th><th class="num">worst margin [dB]</th></tr></thead><tbody id="detectors"></tbody></table>
  <h2>Worst frequencies</h2>
  <table><thead><tr><th>frequency</th><th>detector</th><th class="num">reading [dBµV]</th><th class="num">margin [dB]</th><th>verdict</th></tr></thead><tbody id="worst"></tbody></table>
  <h2>Broadcast bands</h2>
  <table><thead><tr><th>band</th><th>verdict</th><th>worst channel</th><th class="num">field [dBµV/m]</th></tr></thead><tbody id="bands"></tbody></table>
  <p class="note" id="notes"></p>
</section>
</main>
<script>
"use strict";
const prefixes = [[1e9,"G"],[1e6,"M"],[1e3,"k"],[1,""],[1e-3,"m"],[1e-6,"u"],[1e-9,"n"],[1e-12,"p"],[1e-15,"f"]];
function siText(v, unit) {
  if (v === 0) return "0 " + unit;
  for (const [scale, p] of prefixes) {
    if (Math.abs(v) >= scale * 0.9995) return Number((v / scale).toPrecision(4)) + " " + p + unit;
  }
  return v.toExponential(3) + " " + unit;
}
function freqText(hz) { return siText(hz, "Hz"); }
function el(tag, attrs, text) {
  const e = document.createElement(tag);
  for (const k in attrs || {}) e.setAttribute(k, attrs[k]);
  if (text !== undefined) e.textContent = text;
  return e;
}
function fixed(x, digits) { return (x === null || x === undefined) ? "—" : Number(x).toFixed(digits); }

let keys = [];
let changed = {};
// One evaluation at a time: the server computes every request it gets, so a slider dragged across
// its range must not queue one per step. A change made while one is computing waits, and only the
// latest state is sent when it ends (the answer to the older state is not drawn).
let inFlight = false;
let waiting = false;
let progressTimer = null;

function sliderRange(k) {
  if (k.kind === "number" && k.si_value >= 0 && k.si_value <= 1) return {log:false, lo:0, hi:1};
  const v = Math.abs(k.si_value) || 1;
  return {log:true, lo:v / 4, hi:v * 4};
}
function toSlider(r, v) {
  const x = r.log ? Math.log(Math.max(v, r.lo) / r.lo) / Math.log(r.hi / r.lo) : (v - r.lo) / (r.hi - r.lo);
  return Math.round(1000 * Math.min(1, Math.max(0, x)));
}
function fromSlider(r, s) {
  const x = s / 1000;
  return r.log ? r.lo * Math.pow(r.hi / r.lo, x) : r.lo + (r.hi - r.lo) * x;
}

function buildControls(scenario) {
  document.getElementById("file").textContent = scenario.title + " — " + scenario.scenario;
  const box = document.getElementById("controls");
  box.textContent = "";
  keys = scenario.keys;
  if (keys.length === 0) box.appendChild(el("p", {class:"note"}, "this scenario has no editable values"));
  keys.forEach((k, i) => {
    const row = el("div", {class:"control"});
    const label = el("label", {for:"field" + i}, k.key);
    row.appendChild(label);
    const mark = () => label.classList.toggle("changed", k.key in changed);
    if (k.kind === "choice") {
      const select = el("select", {id:"field" + i, "data-key":k.key});
      for (const c of k.choices) {
        const o = el("option", {value:c}, c);
        if (c === k.value) o.selected = true;
        select.appendChild(o);
      }
      select.addEventListener("change", () => { changed[k.key] = select.value; mark(); schedule(); });
      row.appendChild(select);
    } else {
      const r = sliderRange(k);
      const slider = el("input", {type:"range", min:0, max:1000, step:1, id:"slider" + i, "data-key":k.key});
      slider.value = toSlider(r, k.si_value);
      const field = el("input", {type:"text", id:"field" + i, "data-key":k.key, value:k.value});
      slider.addEventListener("input", () => {
        const v = fromSlider(r, Number(slider.value));
        if (k.kind === "quantity") { field.value = siText(v, k.unit); changed[k.key] = field.value; }
        else { field.value = Number(v.toPrecision(4)); changed[k.key] = Number(field.value); }
        mark(); schedule();
      });
      field.addEventListener("change", () => {
        changed[k.key] = k.kind === "quantity" ? field.value : Number(field.value);
        mark(); schedule();
      });
      row.appendChild(slider);
      row.appendChild(field);
    }
    box.appendChild(row);
  });
}

function schedule() {
  if (inFlight) { waiting = true; return; }
  evaluate();
}

// An exact answer normally comes within a frame or two and is drawn without a flicker; a slower one
// (a dithered source, a long capture) shows that it is computing, for how long, and dims the
// answer it will replace.
const progressDelayMs = 50;
function showProgress(started) {
  const status = document.getElementById("status");
  status.className = "busy";
  status.textContent = "computing… " + ((performance.now() - started) / 1000).toFixed(1) + " s" +
                       (waiting ? " (a newer change waits)" : "");
  document.getElementById("answer").classList.add("stale");
  progressTimer = setTimeout(showProgress, 100, started);
}
function stopProgress() {
  clearTimeout(progressTimer);
  progressTimer = null;
}

async function post(path) {
  return fetch(path, {method:"POST", headers:{"Content-Type":"application/json"}, body:JSON.stringify({set:changed})});
}

async function evaluate() {
  inFlight = true;
  waiting = false;
  const status = document.getElementById("status");
  stopProgress();
  progressTimer = setTimeout(showProgress, progressDelayMs, performance.now());
  let response, body;
  try {
    response = await post("/api/evaluate");
    body = await response.json();
  } catch (e) {
    stopProgress();
    inFlight = false;
    status.className = "error"; status.textContent = "no answer from the server: " + e;
    return;
  }
  stopProgress();
  if (response.status === 503) {  // the server is busy with other clients: ask again, still one at a time
    status.className = "busy"; status.textContent = "the server is busy; asking again…";
    setTimeout(evaluate, 1000 * (Number(response.headers.get("Retry-After")) || 1));
    return;
  }
  inFlight = false;
  if (waiting) { evaluate(); return; }  // latest wins: this answer is for an older state
  document.getElementById("answer").classList.remove("stale");
  if (!response.ok) { status.className = "error"; status.textContent = body.error || ("HTTP " + response.status); return; }
  status.className = ""; status.textContent = "";
  draw(body);
}

// The plots come as SVG text in the answer. They are parsed as SVG, not HTML, and only drawing
// elements and their presentation attributes are kept, so a script, an event handler, a foreign
// object or a link to anything outside the picture never reaches the page (the server writes none;
// this holds even for an answer that is not ours). null when the text is not one SVG picture.
// The SVG namespace as the HTML parser gives it to an <svg> (so the page names no URL).
const svgNs = (() => { const probe = document.createElement("div"); probe.innerHTML = "<svg></svg>"; return probe.firstChild.namespaceURI; })();
const svgElements = new Set(["svg", "g", "defs", "clipPath", "rect", "line", "path", "polyline", "polygon",
                             "circle", "ellipse", "text", "tspan", "title", "desc"]);
function sanitizeSvg(text) {
  if (typeof text !== "string") return null;
  const doc = new DOMParser().parseFromString(text, "image/svg+xml");
  const root = doc.documentElement;
  if (!root || root.namespaceURI !== svgNs || root.localName !== "svg" ||
      doc.getElementsByTagNameNS("*", "parsererror").length > 0) return null;
  const clean = (element) => {
    for (const a of Array.from(element.attributes)) {
      const name = a.localName.toLowerCase();
      const value = a.value.replace(/\s+/g, "").toLowerCase();
      const external = value.includes("url(") && !/^url\(#[\w.-]+\)$/.test(value);
      if (name.startsWith("on") || name === "href" || name === "style" || a.namespaceURI || external ||
          value.includes("javascript:")) {
        element.removeAttributeNode(a);
      }
    }
    for (const child of Array.from(element.childNodes)) {
      if (child.nodeType === Node.TEXT_NODE) continue;
      if (child.nodeType === Node.ELEMENT_NODE && child.namespaceURI === svgNs && svgElements.has(child.localName)) {
        clean(child);
      } else {
        child.remove();  // script, style, foreignObject, a, use, image, animate, comments, ...
      }
    }
  };
  clean(root);
  return document.importNode(root, true);
}

// Each band's plot, or a note where the answer has none (or one that is not a picture).
function drawPlots(s) {
  const box = document.getElementById("plots");
  box.textContent = "";
  const plots = Array.isArray(s.plots) ? s.plots : [];
  for (const scan of (s.scans || [])) {
    const plot = plots.find(p => p && p.band === scan.band);
    const figure = el("figure", {"data-plot-band":scan.band});
    const svg = plot ? sanitizeSvg(plot.svg) : null;
    if (svg) figure.appendChild(svg);
    else figure.appendChild(el("p", {class:"note"}, "no plot of band " + scan.band + " in this answer"));
    box.appendChild(figure);
  }
  if (box.childNodes.length === 0) box.appendChild(el("p", {class:"note"}, "no receiver band was scanned"));
}

function draw(s) {
  const verdict = document.getElementById("verdict");
  verdict.textContent = s.verdict;
  verdict.className = s.verdict;
  const w = s.worst;
  document.getElementById("worst-line").textContent = w ?
    "worst: " + fixed(w.margin_db, 1) + " dB at " + freqText(w.frequency_hz) + " (" + w.detector + ", " + w.limit + ")" :
    "no limit compared";
  const det = document.getElementById("detectors"); det.textContent = "";
  for (const name in (s.worst_margin_db || {})) {
    const tr = el("tr");
    tr.appendChild(el("td", {}, name));
    tr.appendChild(el("td", {class:"num", "data-detector":name}, fixed(s.worst_margin_db[name], 1)));
    det.appendChild(tr);
  }
  const worst = document.getElementById("worst"); worst.textContent = "";
  for (const r of (s.worst_frequencies || []).slice(0, 6)) {
    const tr = el("tr");
    tr.appendChild(el("td", {}, freqText(r.frequency_hz)));
    tr.appendChild(el("td", {}, r.detector));
    tr.appendChild(el("td", {class:"num"}, fixed(r.reading_dbuv, 1)));
    tr.appendChild(el("td", {class:"num"}, fixed(r.margin_db, 1)));
    const td = el("td"); td.appendChild(el("span", {class:"tag " + r.verdict}, r.verdict)); tr.appendChild(td);
    worst.appendChild(tr);
  }
  const bands = document.getElementById("bands"); bands.textContent = "";
  for (const b of (s.bands || [])) {
    const tr = el("tr", {"data-band":b.name});
    tr.appendChild(el("td", {}, b.name));
    const td = el("td"); td.appendChild(el("span", {class:"tag " + b.verdict}, b.verdict)); tr.appendChild(td);
    tr.appendChild(el("td", {}, b.worst_channel_hz ? freqText(b.worst_channel_hz) : "—"));
    tr.appendChild(el("td", {class:"num"}, fixed(b.worst_level_dbuvm, 1)));
    bands.appendChild(tr);
  }
  document.getElementById("notes").textContent = (s.notes || []).join(" ");
  drawPlots(s);
}

async function save() {
  const status = document.getElementById("status");
  const response = await post("/api/scenario.toml");
  if (!response.ok) { const b = await response.json(); status.className = "error"; status.textContent = b.error; return; }
  const blob = new Blob([await response.text()], {type:"application/toml"});
  const a = el("a", {href:URL.createObjectURL(blob), download:"whatif-scenario.toml"});
  document.body.appendChild(a); a.click(); a.remove();
}

document.getElementById("reset").addEventListener("click", () => { changed = {}; start(false); });
document.getElementById("save").addEventListener("click", save);

// A link may carry changes: #switching.frequency=1.9%20MHz&coupling.parasitic_capacitance=50%20pF
// (values as typed in the fields; unknown keys are left to the server to name in its error).
function changesFromLink() {
  const found = {};
  for (const part of location.hash.replace(/^#/, "").split("&")) {
    const eq = part.indexOf("=");
    if (eq > 0) found[decodeURIComponent(part.slice(0, eq))] = decodeURIComponent(part.slice(eq + 1));
  }
  return found;
}

async function start(fromLink) {
  const response = await fetch("/api/scenario");
  const scenario = await response.json();
  if (fromLink) {
    const link = changesFromLink();
    for (const k of scenario.keys) {
      if (k.key in link) { k.value = link[k.key]; changed[k.key] = k.kind === "number" ? Number(link[k.key]) : link[k.key]; }
    }
    for (const key in link) if (!(key in changed)) changed[key] = link[key];
  }
  buildControls(scenario);
  document.querySelectorAll("label").forEach(l => l.classList.toggle("changed", l.textContent in changed));
  schedule();
}
start(true);
</script>
</body>
</html>
)spurcast_page";
  return page;
}

}  // namespace spurcast
