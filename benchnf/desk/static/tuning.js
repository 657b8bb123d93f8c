// benchnf desk: the noise figure while tuning (a receiver, the source switched on and off, a point per pair).
"use strict";

const tuning = {timer: null, held: null, latest: null};

function tuningForm() {
  return Object.fromEntries(new FormData($("#tuning-form")).entries());
}
function drawTuning(p) {
  tuning.latest = p;
  const pairs = p.pairs || [];
  const last = pairs.length ? pairs[pairs.length - 1] : null;
  $("#tuning-nf").textContent = last ? last.text.nf : "–";
  $("#tuning-nf-cond").textContent = last ? `pair ${last.index} at ${last.t_s.toFixed(1)} s; Te ${last.text.te} (U at k=2)`
    : (p.running ? (p.keying ? `benchnf keys the source (${p.keying.state_s} s states); waiting for a hot and a cold state`
      : "waiting for a hot and a cold state") : "switch the source on and off");
  $("#tuning-gain").textContent = last ? last.text.gain : "–";
  $("#tuning-cal-state").textContent = p.calibrating ? "taking the next pair as the calibration pair"
    : (p.calibration ? `corrected: ${p.calibration.text}`
      : "no calibration pair: system figures");
  const best = p.best === null || p.best === undefined ? null : pairs[p.best];
  $("#tuning-best").textContent = best ? best.text.nf : "–";
  $("#tuning-pairs").textContent = `${pairs.length} pair${pairs.length === 1 ? "" : "s"}` + (best ? `; best is pair ${best.index}` : "");
  $("#tuning-receiver").textContent = p.running ? "running" : (p.error ? "stopped" : "idle");
  $("#tuning-warn").textContent = p.error || (p.warnings || []).join("; ")
    || (p.receiver || "") + (p.keying ? `; keying from ${p.keying.device_described}` : "");
  const t = pairs.map((q) => q.t_s);
  const traces = [
    {type: "scatter", mode: "lines+markers", name: "noise figure", x: t, y: pairs.map((q) => q.nf_db),
     error_y: {type: "data", array: pairs.map((q) => q.u95_db), visible: true}, line: {color: COLOURS[0]}},
    {type: "scatter", mode: "markers", name: "adjustment", x: pairs.filter((q) => q.mark).map((q) => q.t_s),
     y: pairs.filter((q) => q.mark).map((q) => q.nf_db), text: pairs.filter((q) => q.mark).map((q) => q.mark),
     marker: {symbol: "triangle-down", size: 12, color: COLOURS[2]}, hoverinfo: "text"}];
  if (pairs.some((q) => q.gain_db !== null)) traces.push({type: "scatter", mode: "lines+markers", name: "gain",
    x: t, y: pairs.map((q) => q.gain_db), yaxis: "y2", line: {color: COLOURS[1], dash: "dot"}});
  Plotly.react("tuning-time", traces, {margin: {t: 24, r: 56}, title: {text: "against time", font: {size: 13}},
    xaxis: {title: {text: "time (s)"}}, yaxis: {title: {text: "noise figure (dB)"}},
    yaxis2: {title: {text: "gain (dB)"}, overlaying: "y", side: "right", showgrid: false},
    legend: {orientation: "h", y: -0.25}}, {displaylogo: false, responsive: true});
  const rows = p.rows || [];
  const ftr = [{type: "scatter", mode: "lines+markers", name: "latest pair", x: rows.map((r) => r.freq_hz / 1e6),
    y: rows.map((r) => r.nf_db), error_y: {type: "data", array: rows.map((r) => r.u95_db), visible: true},
    line: {color: COLOURS[0]}}];
  if (tuning.held) ftr.push({type: "scatter", mode: "lines", name: "held", x: tuning.held.map((r) => r.freq_hz / 1e6),
    y: tuning.held.map((r) => r.nf_db), line: {color: COLOURS[3], dash: "dash"}});
  const enr = p.enr_points || [];
  if (enr.length) ftr.push({type: "scatter", mode: "markers", name: "ENR table", x: enr.map((e) => e.freq_hz / 1e6),
    y: enr.map((e) => e.enr_db), yaxis: "y2", marker: {symbol: "diamond", color: COLOURS[4]}});
  Plotly.react("tuning-freq", ftr, {margin: {t: 24, r: 56}, title: {text: "across the span", font: {size: 13}},
    xaxis: {title: {text: "frequency (MHz)"}}, yaxis: {title: {text: "noise figure (dB)"}},
    yaxis2: {title: {text: "ENR (dB)"}, overlaying: "y", side: "right", showgrid: false},
    legend: {orientation: "h", y: -0.25}}, {displaylogo: false, responsive: true});
  document.body.dataset.tuningPairs = String(pairs.length);
}
async function pollTuning() {
  try { drawTuning(await api("tuning/state")); } catch (err) { say(err.message); }
}
function tuningTimer(on) {
  if (on && !tuning.timer) tuning.timer = setInterval(pollTuning, 500);
  if (!on && tuning.timer) { clearInterval(tuning.timer); tuning.timer = null; }
}
window.prepareTuning = () => { pollTuning(); tuningTimer(true); };
window.addEventListener("DOMContentLoaded", () => {
  $("#tuning-start").addEventListener("click", () => guarded(async () => {
    const r = await api("tuning/start", tuningForm());
    say("receiving from " + r.receiver, true);
    tuningTimer(true);
    refreshState();
  }));
  $("#tuning-stop").addEventListener("click", () => guarded(async () => {
    await api("tuning/stop", {}); pollTuning(); refreshState();
  }));
  $("#tuning-cal").addEventListener("click", () => guarded(() => api("tuning/act", {what: "calibrate"})));
  $("#tuning-restart").addEventListener("click", () => guarded(() => api("tuning/act", {what: "restart"})));
  $("#tuning-mark").addEventListener("click", () => guarded(async () => {
    await api("tuning/act", {what: "mark", text: $("#tuning-note").value});
    say("noted: the next pair carries it", true);
  }));
  $("#tuning-hold").addEventListener("click", (e) => {
    const on = e.target.getAttribute("aria-pressed") !== "true";
    e.target.setAttribute("aria-pressed", on);
    tuning.held = on && tuning.latest ? tuning.latest.rows : null;
    if (tuning.latest) drawTuning(tuning.latest);
  });
});
