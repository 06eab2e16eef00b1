// The live view's page: one self-contained HTML document (its style and script inline, no
// fetch, no font, no CDN) that opens the coordinator's feed (server/live-view/) and redraws on
// every event. Laid out for a projector: large type, black on white, thick lines, the
// project's palette (palette.ts). Everything the feed sends is shown as text through
// textContent, never parsed as markup.

import {
  CLIENT_STATE_COLOURS,
  DIRECTION_STYLES,
  LAYER_COLOURS,
  METHOD_COLOURS,
  OKABE_ITO,
  PREDICTED_DASH,
} from './palette.js';

const STYLE = `
:root { --ink: #000; --rule: #6b6b6b; --paper: #fff; }
* { box-sizing: border-box; }
body { margin: 0; font: 22px/1.3 system-ui, sans-serif; color: var(--ink); background: var(--paper); }
header { display: flex; align-items: baseline; gap: 1.2em; padding: 0.4em 0.8em; border-bottom: 4px solid var(--ink); flex-wrap: wrap; }
#round-box { font-size: 2.6em; font-weight: 800; font-variant-numeric: tabular-nums; }
#round-box small { font-size: 0.45em; font-weight: 600; }
#scenario { font-size: 1.3em; font-weight: 700; }
#method { font-size: 1.3em; font-weight: 800; padding: 0 0.3em; border-left: 0.35em solid currentColor; }
#facts { color: #333; }
#status { margin-left: auto; font-weight: 700; padding: 0.15em 0.6em; border: 3px solid var(--ink); }
main { display: grid; grid-template-columns: minmax(0, 5fr) minmax(0, 6fr); grid-template-rows: auto auto; gap: 0.6em 1em; padding: 0.6em 0.8em; }
section h2 { font-size: 1em; margin: 0 0 0.2em; letter-spacing: 0.02em; }
canvas { display: block; width: 100%; }
#tiles { height: 440px; }
#curve { height: 440px; }
#bytes, #durations { height: 230px; }
.legend { display: flex; flex-wrap: wrap; gap: 0.2em 1em; font-size: 0.85em; margin-top: 0.2em; }
.legend span::before { content: ""; display: inline-block; width: 0.9em; height: 0.9em; margin-right: 0.3em; vertical-align: -0.1em; background: var(--swatch); border: 1px solid #000; }
#held { font-size: 1.05em; font-weight: 600; font-variant-numeric: tabular-nums; }
#final { grid-column: 1 / -1; display: none; border: 4px solid var(--ink); padding: 0.3em 0.8em; }
#final.shown { display: block; }
#final dl { display: grid; grid-template-columns: repeat(4, auto); gap: 0.1em 1.2em; margin: 0; font-variant-numeric: tabular-nums; }
#final dt { font-weight: 700; }
#final dd { margin: 0; }
`;

/** The page's script; `PALETTE` is defined before it. Plain ES2017, no template literals. */
const SCRIPT = `
"use strict";
var STATE_NAMES = ["idle", "sending", "computing", "waiting", "dropped", "lost"];
var view = { run: null, rounds: [], states: "", end: null };

function byId(id) { return document.getElementById(id); }
function setText(id, text) { byId(id).textContent = text; }
function sci(v) { return v === null || !isFinite(v) ? "n/a" : v.toExponential(2); }
function grouped(n) { return String(n).replace(/\\B(?=(\\d{3})+(?!\\d))/g, "\\u2009"); }
function seconds(v) { return v < 1 ? (v * 1000).toFixed(0) + " ms" : v.toFixed(2) + " s"; }

function sizedCanvas(canvas) {
  var ratio = window.devicePixelRatio || 1;
  var w = canvas.clientWidth, h = canvas.clientHeight;
  if (canvas.width !== Math.round(w * ratio) || canvas.height !== Math.round(h * ratio)) {
    canvas.width = Math.round(w * ratio);
    canvas.height = Math.round(h * ratio);
  }
  var g = canvas.getContext("2d");
  g.setTransform(ratio, 0, 0, ratio, 0, 0);
  g.clearRect(0, 0, w, h);
  return { g: g, w: w, h: h };
}

function drawTiles() {
  var canvas = byId("tiles");
  var c = sizedCanvas(canvas);
  var run = view.run;
  if (run === null) return;
  var n = run.clients;
  var cols = Math.max(1, Math.ceil(Math.sqrt(n * c.w / c.h)));
  var rows = Math.ceil(n / cols);
  var tile = Math.max(2, Math.floor(Math.min(c.w / cols, c.h / rows)));
  var counts = {};
  for (var i = 0; i < n; i++) {
    var state = STATE_NAMES[view.states.charCodeAt(i) - 48] || "idle";
    counts[state] = (counts[state] || 0) + 1;
    var s = run.slowdowns[i];
    // Area in proportion to speed (1 / s_i against the fastest), never below a visible third.
    var side = tile * 0.92 * Math.max(0.35, Math.sqrt(1 / s));
    var x = (i % cols) * tile, y = Math.floor(i / cols) * tile;
    c.g.fillStyle = "#F2F2F2";
    c.g.fillRect(x + 1, y + 1, tile - 2, tile - 2);
    c.g.fillStyle = PALETTE.states[state];
    c.g.fillRect(x + (tile - side) / 2, y + (tile - side) / 2, side, side);
    if (tile >= 44) {
      c.g.font = "600 " + Math.round(tile / 5) + "px system-ui, sans-serif";
      // White on the dark fills (computing, lost), black on the light ones.
      c.g.fillStyle = state === "lost" || state === "computing" ? "#FFF" : "#000";
      c.g.fillText(String(i), x + 3, y + tile / 5 + 1);
      c.g.fillText("\\u00d7" + s.toFixed(1), x + 3, y + tile - 4);
    }
  }
  canvas.dataset.states = view.states;
  canvas.dataset.cols = String(cols);
  canvas.dataset.tilePx = String(tile);
  var summary = STATE_NAMES.filter(function (k) { return counts[k]; })
    .map(function (k) { return counts[k] + " " + k; }).join(", ");
  canvas.setAttribute("aria-label", n + " clients: " + summary);
  setText("tile-counts", summary);
}

function logScale(values, extra) {
  var lo = Infinity, hi = -Infinity;
  values.concat(extra).forEach(function (v) {
    if (v !== null && isFinite(v) && v > 0) { lo = Math.min(lo, v); hi = Math.max(hi, v); }
  });
  if (lo === Infinity) return null;
  var a = Math.floor(Math.log10(lo)), b = Math.ceil(Math.log10(hi));
  if (a === b) b = a + 1;
  return { a: a, b: b };
}

function axes(c, pad, xMin, xMax, yLabels) {
  c.g.strokeStyle = "#000";
  c.g.lineWidth = 2;
  c.g.setLineDash([]);
  c.g.beginPath();
  c.g.moveTo(pad.l, pad.t);
  c.g.lineTo(pad.l, c.h - pad.b);
  c.g.lineTo(c.w - pad.r, c.h - pad.b);
  c.g.stroke();
  c.g.fillStyle = "#000";
  c.g.font = "18px system-ui, sans-serif";
  c.g.fillText(String(xMin), pad.l - 4, c.h - pad.b + 20);
  c.g.fillText("round " + xMax, c.w - pad.r - 90, c.h - pad.b + 20);
  yLabels.forEach(function (label) { c.g.fillText(label.text, 4, label.y + 6); });
}

function polyline(c, points, colour, dash, width) {
  c.g.strokeStyle = colour;
  c.g.lineWidth = width;
  c.g.setLineDash(dash);
  c.g.beginPath();
  var started = false;
  points.forEach(function (p) {
    if (p === null) { started = false; return; }
    if (started) c.g.lineTo(p[0], p[1]); else c.g.moveTo(p[0], p[1]);
    started = true;
  });
  c.g.stroke();
  c.g.setLineDash([]);
}

function roundAxisMax() {
  var last = view.rounds.length ? view.rounds[view.rounds.length - 1].round : 0;
  // Room ahead while the run goes on; the axis ends at the last round once it is over.
  return view.end !== null ? Math.max(1, last) : Math.max(10, Math.ceil(last * 1.2));
}

function drawCurve() {
  var canvas = byId("curve");
  var c = sizedCanvas(canvas);
  if (view.run === null) return;
  var measured = view.rounds.filter(function (r) { return r.gap !== null; });
  canvas.dataset.points = String(measured.length);
  var gaps = measured.map(function (r) { return r.gap; });
  var predicted = view.rounds.map(function (r) { return r.predicted; });
  var scale = logScale(gaps.concat(predicted), [view.run.target]);
  if (scale === null) return;
  var pad = { l: 86, r: 16, t: 12, b: 30 };
  var xMax = roundAxisMax();
  var x = function (round) { return pad.l + (c.w - pad.l - pad.r) * round / xMax; };
  var y = function (v) {
    return pad.t + (c.h - pad.t - pad.b) * (scale.b - Math.log10(v)) / (scale.b - scale.a);
  };
  var labels = [];
  for (var e = scale.a; e <= scale.b; e++) {
    c.g.strokeStyle = "#DDDDDD";
    c.g.lineWidth = 1;
    c.g.beginPath();
    c.g.moveTo(pad.l, y(Math.pow(10, e)));
    c.g.lineTo(c.w - pad.r, y(Math.pow(10, e)));
    c.g.stroke();
    labels.push({ text: "1e" + e, y: y(Math.pow(10, e)) });
  }
  axes(c, pad, 0, xMax, labels);
  if (view.run.target > 0) {
    polyline(c, [[pad.l, y(view.run.target)], [c.w - pad.r, y(view.run.target)]], PALETTE.target, [3, 5], 3);
  }
  var point = function (round, v) { return v !== null && isFinite(v) && v > 0 ? [x(round), y(v)] : null; };
  var colour = PALETTE.methods[view.run.method] || "#000";
  polyline(c, view.rounds.map(function (r) { return point(r.round, r.predicted); }), colour, PALETTE.predictedDash, 3);
  polyline(c, measured.map(function (r) { return point(r.round, r.gap); }), colour, [], 4);
}

var SERIES = [
  ["payload", "up"], ["payload", "down"], ["encoded", "up"], ["encoded", "down"], ["wire", "up"], ["wire", "down"]
];

function drawBytes() {
  var canvas = byId("bytes");
  var c = sizedCanvas(canvas);
  var rounds = view.rounds.filter(function (r) { return r.round > 0; });
  if (rounds.length === 0) return;
  var hi = 1;
  rounds.forEach(function (r) {
    SERIES.forEach(function (s) { var b = r.bytes[s[0]]; if (b) hi = Math.max(hi, b[s[1]]); });
  });
  var pad = { l: 86, r: 16, t: 10, b: 30 };
  var xMax = roundAxisMax();
  var x = function (round) { return pad.l + (c.w - pad.l - pad.r) * round / xMax; };
  var y = function (v) { return pad.t + (c.h - pad.t - pad.b) * (1 - v / hi); };
  axes(c, pad, 0, xMax, [{ text: grouped(hi) + " B", y: pad.t + 4 }]);
  SERIES.forEach(function (s) {
    if (!rounds[0].bytes[s[0]]) return;
    polyline(c, rounds.map(function (r) { return [x(r.round), y(r.bytes[s[0]][s[1]])]; }),
      PALETTE.layers[s[0]], PALETTE.directions[s[1]], 3);
  });
}

function drawDurations() {
  var canvas = byId("durations");
  var c = sizedCanvas(canvas);
  var rounds = view.rounds.filter(function (r) { return r.round > 0; });
  if (rounds.length === 0) return;
  var shown = rounds.slice(-120);
  var hi = 0;
  shown.forEach(function (r) { hi = Math.max(hi, r.wallSeconds); });
  if (!(hi > 0)) return;
  var pad = { l: 86, r: 16, t: 10, b: 30 };
  var bar = (c.w - pad.l - pad.r) / shown.length;
  c.g.fillStyle = PALETTE.duration;
  shown.forEach(function (r, i) {
    var h = (c.h - pad.t - pad.b) * r.wallSeconds / hi;
    c.g.fillRect(pad.l + i * bar, c.h - pad.b - h, Math.max(1, bar - 1), h);
  });
  axes(c, pad, shown[0].round, shown[shown.length - 1].round, [{ text: seconds(hi), y: pad.t + 4 }]);
}

function showRound(r) {
  setText("round", String(r.round));
  if (r.gap !== null) setText("gap", sci(r.gap));
  if (r.round === 0) return;
  var speed = r.heldBy === null ? "" : " (\\u00d7" + view.run.slowdowns[r.heldBy].toFixed(1) + ")";
  setText("held", "round " + r.round + ": " + seconds(r.wallSeconds) + " wall, " +
    seconds(r.roundSeconds) + " modelled; held back by " +
    (r.heldBy === null ? "nobody" : "client " + r.heldBy + speed) +
    (r.dropped ? "; " + r.dropped + " dropped" : ""));
}

function showRun(run) {
  setText("scenario", run.scenario);
  setText("method", run.method);
  byId("method").style.color = PALETTE.methods[run.method] || "#000";
  setText("round-max", String(run.roundsMax));
  setText("facts", run.clients + " clients on " + run.workers.length + " workers \\u00b7 " +
    run.clock + " clock \\u00b7 policy " + run.policy +
    (run.target > 0 ? " \\u00b7 target " + sci(run.target) : ""));
  setText("gap-name", run.gapName);
  setText("curve-title", run.gapName + " per round");
}

function showEnd(end) {
  setText("status", "over: " + end.stopReason);
  byId("status").dataset.stopReason = end.stopReason;
  var set = function (id, text, value) { setText(id, text); byId(id).dataset.value = String(value); };
  set("final-rounds", String(end.rounds), end.rounds);
  set("final-gap", sci(end.finalGap), end.finalGap);
  set("final-stop", end.stopReason, end.stopReason);
  ["payload", "encoded", "wire"].forEach(function (layer) {
    var b = end.bytes[layer];
    if (!b) return;
    set("final-" + layer, grouped(b.up) + " up / " + grouped(b.down) + " down", b.up + "/" + b.down);
  });
  byId("final").className = "shown";
}

var pending = false;
function redraw() {
  if (pending) return;
  pending = true;
  requestAnimationFrame(function () {
    pending = false;
    drawTiles(); drawCurve(); drawBytes(); drawDurations();
  });
}

function receive(event) {
  if (event.kind === "run") {
    view = { run: event, rounds: [], states: "", end: null };
    showRun(event);
  } else if (event.kind === "round") {
    view.rounds.push(event);
    showRound(event);
  } else if (event.kind === "tiles") {
    view.states = event.states;
  } else if (event.kind === "end") {
    view.end = event;
    showEnd(event);
  }
  redraw();
}

var retryMs = 500;
function connect() {
  var token = (/[#&]view=([A-Za-z0-9_-]+)/.exec(location.hash) || [])[1];
  var scheme = location.protocol === "https:" ? "wss://" : "ws://";
  var socket = new WebSocket(scheme + location.host + "/feed");
  socket.onopen = function () {
    socket.send(JSON.stringify(token ? { viewToken: token } : {}));
    setText("status", "live");
    retryMs = 500;
  };
  socket.onmessage = function (message) { receive(JSON.parse(message.data)); };
  socket.onclose = function (close) {
    if (view.end !== null) return;
    if (close.code === 1008 && /^E_VIEW_(KEY|HELLO)/.test(close.reason)) {
      setText("status", "refused: " + close.reason);
      return;
    }
    // A viewer that fell behind, or a blip: join again and take the history afresh.
    setText("status", "reconnecting");
    setTimeout(connect, retryMs);
    retryMs = Math.min(retryMs * 2, 8000);
  };
}

window.addEventListener("resize", redraw);
connect();
`;

function legend(entries: readonly [string, string][]): string {
  return entries
    .map(([label, colour]) => `<span style="--swatch:${colour}">${label}</span>`)
    .join('');
}

/** The page, as served at / by the live view. */
export function liveViewPage(): string {
  const palette = {
    states: CLIENT_STATE_COLOURS,
    methods: METHOD_COLOURS,
    layers: LAYER_COLOURS,
    directions: { up: DIRECTION_STYLES.up.dash, down: DIRECTION_STYLES.down.dash },
    predictedDash: PREDICTED_DASH,
    target: OKABE_ITO.vermillion,
    duration: OKABE_ITO.bluishGreen,
  };
  const stateLegend = legend(Object.entries(CLIENT_STATE_COLOURS));
  const layerLegend = legend(Object.entries(LAYER_COLOURS));
  return `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>roundwire live view</title>
<style>${STYLE}</style>
</head>
<body>
<header>
  <div id="round-box">round <span id="round">-</span><small> of <span id="round-max">-</span></small></div>
  <div id="scenario">waiting for the run</div>
  <div id="method"></div>
  <div id="facts"></div>
  <div id="status">connecting</div>
</header>
<main>
  <section>
    <h2>Clients (tile area: speed; colour: state)</h2>
    <canvas id="tiles" role="img" aria-label="clients"></canvas>
    <div class="legend">${stateLegend}</div>
    <div id="tile-counts"></div>
  </section>
  <section>
    <h2 id="curve-title">f - f* per round</h2>
    <canvas id="curve" role="img" aria-label="the gap per round, measured and predicted"></canvas>
    <div class="legend"><span style="--swatch:#000">measured (solid)</span><span style="--swatch:#fff">predicted (dashed)</span><span style="--swatch:${palette.target}">target</span></div>
    <div><span id="gap-name">f - f*</span> now: <b id="gap">-</b></div>
  </section>
  <section>
    <h2>Bytes per round (up solid, down dotted)</h2>
    <canvas id="bytes" role="img" aria-label="bytes per round by layer and direction"></canvas>
    <div class="legend">${layerLegend}</div>
  </section>
  <section>
    <h2>Round duration (wall seconds)</h2>
    <canvas id="durations" role="img" aria-label="wall seconds per round"></canvas>
    <div id="held">-</div>
  </section>
  <section id="final">
    <h2>Run over</h2>
    <dl>
      <dt>rounds</dt><dd id="final-rounds"></dd>
      <dt>final gap</dt><dd id="final-gap"></dd>
      <dt>stop reason</dt><dd id="final-stop"></dd>
      <dt>payload bytes</dt><dd id="final-payload"></dd>
      <dt>encoded bytes</dt><dd id="final-encoded"></dd>
      <dt>wire bytes</dt><dd id="final-wire"></dd>
    </dl>
  </section>
</main>
<script>
var PALETTE = ${JSON.stringify(palette)};
${SCRIPT}
</script>
</body>
</html>
`;
}
