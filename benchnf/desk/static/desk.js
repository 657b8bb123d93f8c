// benchnf desk: the page's behaviour. Plain browser JavaScript; plots through plotly.js (served from its wheel).
"use strict";

const COLOURS = ["#11646b", "#b3402a", "#a8740f", "#55606a", "#1c5d99"];
const $ = (sel) => document.querySelector(sel);
const el = (tag, attrs = {}, ...kids) => {
  const e = document.createElement(tag);
  for (const [k, v] of Object.entries(attrs)) {
    if (k === "class") e.className = v; else if (k.startsWith("on")) e.addEventListener(k.slice(2), v);
    else e.setAttribute(k, v);
  }
  for (const kid of kids) e.append(kid instanceof Node ? kid : String(kid ?? ""));
  return e;
};

// ---- talking to the desk -------------------------------------------------------------------------
async function api(path, body) {
  const opts = body === undefined ? {} : {method: "POST", headers: {"Content-Type": "application/json",
    "X-Benchnf-Desk": "1"}, body: JSON.stringify(body)};
  const r = await fetch("/api/" + path, opts);
  const data = await r.json().catch(() => ({error: `the desk answered ${r.status}`}));
  if (!r.ok) throw new Error(data.error || `the desk answered ${r.status}`);
  return data;
}
function say(text, ok = false) {
  const m = $("#message");
  m.textContent = text; m.hidden = !text; m.className = ok ? "message ok" : "message";
}
async function guarded(fn) {
  try { say(""); await fn(); } catch (err) { say(err.message); }
}
async function fillFiles(select, kind, blank) {
  const {files} = await api("files?kind=" + kind);
  select.replaceChildren(...(blank ? [el("option", {value: ""}, blank)] : []),
    ...files.map((f) => el("option", {value: f}, f)));
  return files;
}

// ---- sections --------------------------------------------------------------------------------------
function show(view) {
  for (const b of document.querySelectorAll(".rail button")) b.classList.toggle("chosen", b.dataset.view === view);
  for (const s of document.querySelectorAll(".view")) s.hidden = s.id !== "view-" + view;
  say("");
  ({results: loadResultsList, live: prepareLive, plan: preparePlan, check: prepareCheck, gauge: prepareGauge,
    tuning: () => window.prepareTuning && window.prepareTuning()})[view]();
  for (const p of document.querySelectorAll("#view-" + view + " .js-plotly-plot")) Plotly.Plots.resize(p);
}

// ---- plots ----------------------------------------------------------------------------------------
const MODES = {line: "lines", markers: "markers", "line+markers": "lines+markers"};
function drawTrace(t, i, spec) {
  const colour = COLOURS[i % COLOURS.length];
  if (t.style === "bar") return {type: "bar", name: t.name, x: t.labels, y: t.y, marker: {color: colour}};
  if (t.style === "band") {  // a shaded interval y +/- u
    const up = t.y.map((y, k) => y === null || t.u[k] === null ? null : y + t.u[k]);
    const down = t.y.map((y, k) => y === null || t.u[k] === null ? null : y - t.u[k]);
    return [{type: "scatter", mode: "lines", x: t.x, y: down, line: {width: 0}, showlegend: false, hoverinfo: "skip"},
      {type: "scatter", mode: "lines", name: t.name, x: t.x, y: up, fill: "tonexty", line: {width: 0},
       fillcolor: colour + "33", hoverinfo: "skip"}];
  }
  const onCategories = spec.categories && t.labels;  // the labels are the category axis, not text by the points
  return {type: "scatter", mode: (MODES[t.style] || "lines") + (t.labels && t.style === "markers" && !onCategories ? "+text" : ""),
    name: t.name, x: onCategories ? t.labels : t.x, y: t.y,
    line: {color: colour, width: 1.4}, marker: {color: colour, size: 6},
    text: onCategories ? undefined : (t.labels || undefined), textposition: "top center",
    hovertemplate: `%{x:.4g} ${spec.x_label.match(/\((.*)\)/)?.[1] || ""}<br>%{y:.4g} ${spec.y_label.match(/\((.*)\)/)?.[1] || ""}<extra>${t.name}</extra>`,
    ...(t.u ? {error_y: {type: "data", array: t.u, color: colour, thickness: 1}} : {})};
}
function drawPlot(div, spec) {
  const traces = spec.traces.filter((t) => t.style !== "reference").flatMap((t, i) => drawTrace(t, i, spec));
  const refs = spec.traces.filter((t) => t.style === "reference" && t.y[0] !== null);
  const shapes = refs.map((t, i) => ({type: "line", xref: "paper", x0: 0, x1: 1, yref: "y", y0: t.y[0], y1: t.y[0],
    line: {color: COLOURS[(i + 2) % COLOURS.length], dash: "dash", width: 1.2}}));
  const annotations = refs.map((t, i) => ({xref: "paper", x: 1, xanchor: "right", yref: "y", y: t.y[0], yanchor: "bottom",
    text: t.name, showarrow: false, font: {size: 11, color: COLOURS[(i + 2) % COLOURS.length]}}));
  if (spec.band && !spec.categories) shapes.unshift({type: "rect", xref: "x", yref: "paper", x0: spec.band[0], x1: spec.band[1],
    y0: 0, y1: 1, fillcolor: "#d7e9e8", opacity: 0.35, line: {width: 0}, layer: "below"});
  const layout = {title: {text: spec.title, font: {size: 14}}, margin: {l: 70, r: 20, t: 40, b: 50},
    paper_bgcolor: "#fbf9f4", plot_bgcolor: "#fbf9f4", font: {family: "DejaVu Sans, sans-serif", color: "#1f2a30"},
    xaxis: {title: {text: spec.x_label}, type: spec.categories ? "category" : (spec.log_x ? "log" : "linear"),
      gridcolor: "#e4ddcf"},
    yaxis: {title: {text: spec.y_label}, type: spec.log_y ? "log" : "linear", gridcolor: "#e4ddcf", tickformat: "~g",
      ...(spec.y_from_zero ? {rangemode: "tozero"} : {})},
    legend: {orientation: "h", y: -0.22}, shapes, annotations, barmode: "group"};
  return Plotly.react(div, traces, layout, {displaylogo: false, responsive: true});
}

// ---- results ----------------------------------------------------------------------------------------
async function loadResultsList(chosen) {
  const {files} = await api("files?kind=results");
  const list = $("#results-list");
  list.replaceChildren(...files.map((f) => el("li", {}, el("button", {"data-file": f, onclick: () => openResult(f)}, f))));
  if (!files.length) list.append(el("li", {class: "hint"}, "No results here yet: analyse captures, or run a plan."));
  await fillFiles($("#analyse-folder"), "units");
  await fillFiles($("#analyse-cal"), "calibrations", "—");
  if (chosen) openResult(chosen);
}
function figureCard(f) {
  return el("div", {class: "figure", "data-key": f.key}, el("span", {class: "k"}, f.label), el("span", {class: "v"}, f.value),
    el("span", {class: "u"}, f.unit), el("span", {class: "unc"}, f.u ? `U (k=2) ${f.u}` : ""),
    ...(f.note ? [el("span", {class: "note"}, f.note)] : []));
}
function table(title, columns, rows) {
  return [el("h3", {}, title), el("table", {class: "grid"}, el("thead", {}, el("tr", {}, ...columns.map((c) => el("th", {}, c)))),
    el("tbody", {}, ...rows.map((r) => el("tr", {}, ...r.map((c) => el("td", {}, c))))))];
}
async function openResult(name) {
  await guarded(async () => {
    for (const b of document.querySelectorAll("#results-list button")) b.classList.toggle("chosen", b.dataset.file === name);
    const box = $("#result");
    box.replaceChildren(el("p", {class: "hint"}, "Reading " + name + " …"));
    const v = await api("result?path=" + encodeURIComponent(name));
    const plots = v.plots.map((p) => el("div", {class: "plot", id: "plot-" + p.id, "data-plot": p.id}));
    box.replaceChildren(el("h2", {}, `${v.kind} · ${v.name}` + (v.provenance ? ` · made ${v.provenance}` : "")),
      el("div", {class: "figures", id: "figures"}, ...v.headline.map(figureCard)), ...plots,
      ...(v.warnings.length ? [el("ul", {class: "warnings"}, ...v.warnings.map((n) => el("li", {}, n)))] : []),
      ...(v.conditions.length ? table("Conditions", ["condition", "value"], v.conditions) : []),
      ...v.tables.flatMap((t) => t.rows.length ? [...table(t.title, t.columns, t.rows), ...(t.note ? [el("p", {class: "hint"}, t.note)] : [])] : []),
      ...(v.notes.length ? [el("h3", {}, "Notes"), el("ul", {class: "notes"}, ...v.notes.map((n) => el("li", {}, n)))] : []),
      el("h3", {}, "Downloads"), el("p", {class: "downloads"}, ...v.downloads.map((d) =>
        el("a", {href: "/api/download?path=" + encodeURIComponent(d), download: d.split("/").pop()}, d)),
        ...v.exports.map((f) => el("a", {href: `/api/export?form=${f}&path=` + encodeURIComponent(name)},
          f === "csv" ? "spectra (CSV, every bin)" : "report (HTML)"))));
    for (let i = 0; i < v.plots.length; i++) await drawPlot(plots[i], v.plots[i]);
    box.dataset.ready = name;
  });
}
async function analyseFolder(ev) {
  ev.preventDefault();
  await guarded(async () => {
    const data = Object.fromEntries(new FormData($("#analyse-form")).entries());
    $("#analyse-run").disabled = true;
    try {
      const r = await api("analyse", data);
      say("analysed; results in " + r.results, true);
      await loadResultsList(r.results);
    } finally { $("#analyse-run").disabled = false; }
  });
}
async function upload(input) {
  const file = input.files[0];
  if (!file) return;
  await guarded(async () => {
    const r = await fetch("/api/upload?name=" + encodeURIComponent(file.name), {method: "POST",
      headers: {"X-Benchnf-Desk": "1"}, body: file});
    const data = await r.json().catch(() => ({error: `the desk answered ${r.status}`}));
    if (!r.ok) throw new Error(data.error);
    say("kept as " + data.saved, true);
    loadResultsList();
  });
  input.value = "";
}

// ---- live -------------------------------------------------------------------------------------------
const live = {socket: null, held: false, reference: null, drawn: false, latest: null, pending: false};
async function prepareLive() {
  await guarded(async () => {
    const devs = await api("devices");
    $("#live-device").replaceChildren(el("option", {value: ""}, "default input"),
      ...devs.map((d) => el("option", {value: d.name, "data-api": d.host_api}, `${d.name} — ${d.host_api} (${d.inputs} in)`)));
    await fillFiles($("#live-cal"), "calibrations", "—");
    await fillFiles($("#live-gain-from"), "analyses", "—");
    await refFiles();
  });
}
async function refFiles() {
  const kind = $("#ref-kind").value;
  const map = {floor: "captures", trace: "traces", mask: "profiles"};
  const sel = $("#ref-file");
  sel.hidden = kind === "none";
  if (kind !== "none") await fillFiles(sel, map[kind]);
}
function liveForm() {
  const data = Object.fromEntries(new FormData($("#live-form")).entries());
  const opt = $("#live-device").selectedOptions[0];
  data.host_api = opt ? opt.dataset.api || "" : "";
  return data;
}
async function liveStart() {
  await guarded(async () => {
    const r = await api("live/start", liveForm());
    say("live from " + r.device + (r.note ? "; note: " + r.note : ""), true);
    connectLive();
    refreshState();
  });
}
function connectLive() {
  if (live.socket) return;
  const ws = new WebSocket((location.protocol === "https:" ? "wss://" : "ws://") + location.host + "/ws/live");
  ws.onmessage = (e) => { live.latest = JSON.parse(e.data); if (!live.pending) { live.pending = true; requestAnimationFrame(drawLive); } };
  ws.onclose = () => { live.socket = null; };
  live.socket = ws;
}
function fmtLevel(v, unit) {
  if (v === null || v === undefined) return "–";
  if (unit !== "V") return (20 * Math.log10(v)).toFixed(2) + " dBFS";
  return (20 * Math.log10(v / 0.7745966692414834)).toFixed(2) + " dBu";
}
function drawLive() {
  live.pending = false;
  const p = live.latest;
  if (!p || live.held) return;
  const unit = p.unit === "V" ? "V/√Hz" : "FS/√Hz";
  const traces = [{x: p.x, y: p.y, type: "scatter", mode: "lines", name: p.referred + "-referred",
    line: {color: COLOURS[0], width: 1.2}}];
  if (p.lines.length) {
    const at = (f) => { let k = 0; while (k < p.x.length - 1 && p.x[k] < f) k++; return p.y[k]; };
    traces.push({x: p.lines.map((l) => l.freq_hz), y: p.lines.map((l) => at(l.freq_hz)), type: "scatter",
      mode: "markers+text", name: "lines found", text: p.lines.map((l) => l.family === "unclassified" ? "" : l.family),
      textposition: "top center", marker: {color: COLOURS[2], size: 9, symbol: "triangle-down"}});
  }
  if (live.reference) traces.push({x: live.reference.x, y: live.reference.y, type: "scatter", mode: "lines",
    name: live.reference.name, line: {color: COLOURS[1], width: 1.2, dash: "dot"}});
  if (p.cross) {
    traces[0].name = "both inputs (cross-spectrum)";
    traces.push({x: p.x, y: p.cross.own_y, type: "scatter", mode: "lines", name: "first input alone",
      line: {color: COLOURS[3], width: 1, dash: "dash"}},
      {x: p.x, y: p.cross.floor_y, type: "scatter", mode: "lines", name: "one bin resolves",
      line: {color: "#8a8a8a", width: 1, dash: "dot"}});
  }
  if (p.reference) {
    traces.push({x: p.x, y: p.reference.coherent_y, type: "scatter", mode: "lines", name: "coherent with the reference",
      line: {color: COLOURS[1], width: 1}},
      {x: p.x, y: p.reference.conditioned_y, type: "scatter", mode: "lines", name: "without the reference",
      line: {color: COLOURS[4], width: 1, dash: "dash"}});
  }
  const div = $("#live-plot");
  if (!live.drawn) {
    drawPlot(div, {title: "", x_label: "Frequency (Hz)", y_label: `${p.referred}-referred density (${unit})`,
      log_x: true, log_y: true, band: p.band_hz, traces: []});
    div.on("plotly_hover", (ev) => { const pt = ev.points[0];
      $("#live-cursor").textContent = `${pt.x.toPrecision(5)} Hz`;
      $("#live-cursor").nextElementSibling.textContent = `${pt.y.toPrecision(4)} ${unit}`; });
    live.drawn = true;
  }
  Plotly.react(div, traces, div.layout);
  $("#live-band").textContent = p.band_rms === null && p.cross ? "below " + fmtLevel(p.cross.band_upper_rms, p.unit)
    : fmtLevel(p.band_rms, p.unit) + (p.cross ? ` ± ${p.cross.band_u95_db.toFixed(2)} dB` : "");
  $("#live-band-cond").textContent = `${p.band_hz[0]}–${p.band_hz[1]} Hz, weighting ${p.weighting}, output` +
    (!p.cross ? "" : p.band_rms === null ? "; not resolved yet: keep averaging" : "; U k=2, cross-spectrum");
  div.dataset.resolved = p.cross ? String(p.band_rms !== null) : "";
  $("#live-ein").textContent = p.ein_rms === null ? "–" : fmtLevel(p.ein_rms, p.unit);
  $("#live-ein-cond").textContent = p.gain_db === null ? "state a gain to refer to the input"
    : `band noise through the stated ${p.gain_db.toFixed(2)} dB gain`;
  $("#live-secs").textContent = p.seconds.toFixed(1) + " s";
  div.dataset.share = p.reference ? p.reference.band_share.toFixed(4) : "";
  $("#live-avg").textContent = p.reference ? `${(100 * Math.max(p.reference.band_share, 0)).toFixed(1)} % of the band noise coherent with the reference`
    : p.cross ? `cross-spectrum; one input alone reads ${fmtLevel(p.cross.own_rms, p.unit)}`
    : p.averages ? `running average of ${p.averages} segments` : "averaging until restarted";
  const top = p.lines[0];
  div.dataset.peakHz = top ? top.freq_hz.toFixed(1) : "";
  div.dataset.draws = String((Number(div.dataset.draws) || 0) + 1);  // read by benchmarks/bench_desk.py
  $("#live-lines tbody").replaceChildren(...p.lines.map((l) => el("tr", {}, el("td", {}, l.freq_hz.toFixed(1)),
    el("td", {}, l.family), el("td", {}, fmtLevel(l.rms, p.unit)), el("td", {}, l.excess_db.toFixed(1) + " dB"))));
}
async function liveReference() {
  await guarded(async () => {
    const r = await api("live/reference", {kind: $("#ref-kind").value, path: $("#ref-file").value});
    live.reference = r.reference;
  });
}

// ---- plan -------------------------------------------------------------------------------------------
let planTimer = null;
async function preparePlan() { await guarded(() => fillFiles($("#plan-file"), "plans")); const s = await api("plan/state").catch(() => null); if (s) drawPlan(s); }
function drawPlan(s) {
  const box = $("#plan");
  const steps = s.steps.map((st, i) => {
    const done = st.takes.length > 0;
    const cls = "step" + (st.recording ? " now" : done ? (st.problems.length ? " trouble" : " done") : "");
    const record = el("button", {class: done ? "" : "go", "data-step": i + 1, onclick: () => planRecord(i + 1)},
      st.recording ? "recording…" : done ? "Record again" : `Record ${st.seconds} s`);
    record.disabled = s.busy !== null;
    return el("div", {class: cls, "data-step": i + 1},
      el("h3", {}, `Step ${i + 1} of ${s.steps.length}: ${st.condition}` + (st.name ? ` (${st.name})` : "")),
      st.prompt ? el("p", {}, st.prompt) : "", ...st.cautions.map((c) => el("p", {class: "caution"}, "Caution: " + c)),
      el("div", {class: "progress"}, Object.assign(el("div"), {style: `width:${((done && !st.recording ? 1 : st.progress) * 100).toFixed(0)}%`})),
      record, done ? el("p", {}, "kept: " + st.takes[st.takes.length - 1]) : "",
      st.problems.length ? el("ul", {class: "problems"}, ...st.problems.map((p) => el("li", {}, p)))
        : done ? el("p", {class: "fine"}, "checked: no problems found") : "");
  });
  const finish = el("button", {class: "go", id: "plan-finish", onclick: planFinish}, "Analyse");
  finish.disabled = s.busy !== null || s.steps.some((st) => !st.takes.length) || !!s.results;
  box.replaceChildren(el("h2", {}, `${s.name} · captures in ${s.folder}`), ...steps, finish,
    s.error ? el("p", {class: "caution"}, s.error) : "", s.outcome ? el("p", {class: "caution"}, s.outcome) : "",
    s.results ? el("p", {}, el("button", {id: "plan-results", onclick: () => { show("results"); loadResultsList(s.results); }}, "Open results " + s.results)) : "");
  box.dataset.busy = s.busy === null ? "" : String(s.busy + 1);
  box.dataset.results = s.results || "";
}
async function planOpen() { await guarded(async () => drawPlan(await api("plan/open", {path: $("#plan-file").value}))); }
async function planRecord(n) {
  await guarded(async () => { drawPlan(await api("plan/record", {step: n})); pollPlan(); refreshState(); });
}
function pollPlan() {
  clearTimeout(planTimer);
  planTimer = setTimeout(async () => {
    const s = await api("plan/state").catch((e) => { say(e.message); return null; });
    if (!s) return;
    drawPlan(s);
    if (s.busy !== null) pollPlan(); else refreshState();
  }, 300);
}
async function planFinish() {
  await guarded(async () => {
    const s = await api("plan/finish", {});
    drawPlan(s);
    if (s.results) { show("results"); await loadResultsList(s.results); }
  });
}

// ---- unit check ----------------------------------------------------------------------------------------
async function prepareCheck() {
  await guarded(async () => {
    const [res, units] = await Promise.all([api("files?kind=analyses"), api("files?kind=units")]);
    $("#check-source").replaceChildren(...res.files.map((f) => el("option", {value: f}, f)),
      ...units.files.map((f) => el("option", {value: f}, f + "/ (captures)")));
    await fillFiles($("#check-profile"), "profiles");
    await fillFiles($("#check-cal"), "calibrations", "—");
    await fillFiles($("#check-floor"), "captures", "— (the unit's own, else one beside the units)");
    $("#serial").focus();
  });
}
async function runCheck(ev) {
  ev.preventDefault();
  await guarded(async () => {
    const data = Object.fromEntries(new FormData($("#check-form")).entries());
    const v = $("#verdict");
    v.hidden = true;
    const r = await api("check", data);
    v.className = "verdict " + r.verdict; v.hidden = false;
    v.replaceChildren(r.verdict, el("small", {}, `${r.serial} against ${r.profile}` + (r.recorded ? " · recorded" : "")),
      ...(r.floor_corrected ? [] : [el("small", {class: "floor-note"}, "analyzer floor NOT subtracted: the figures include its own noise")]));
    const rows = r.limits.rows.map((l) => el("tr", {class: l[5]}, ...l.map((c) => el("td", {}, c))));
    const earlier = await api("checks?serial=" + encodeURIComponent(r.serial));
    $("#check-detail").replaceChildren(el("table", {class: "grid", id: "limits"}, el("thead", {}, el("tr", {},
      ...r.limits.columns.map((c) => el("th", {}, c)))), el("tbody", {}, ...rows)),
      el("p", {class: "hint", id: "decision-rule"}, "decision rule: " + r.decision_rule),
      ...(r.findings.length ? [el("h3", {}, "Findings, in the order to act on them"),
        el("ol", {class: "findings", id: "findings"}, ...r.findings.map((f) => el("li", {}, f)))] : []),
      ...(r.notes.length ? [el("ul", {class: "notes"}, ...r.notes.map((n) => el("li", {}, n)))] : []),
      el("p", {class: "downloads"}, el("a", {href: "/api/download?path=" + encodeURIComponent(r.report)}, "report " + r.report)),
      ...table(`Checks of ${r.serial} in the records`, ["when (UTC)", "verdict", "station", "operator", "profile"],
        earlier.map((e) => [e.checked_at, e.verdict, e.station || "", e.operator || "", e.profile])));
    $("#serial").select();
  });
}

// ---- station study (gauge R&R) ----------------------------------------------------------------------------
async function prepareGauge() {
  await guarded(async () => {
    const r = await api("grr");
    $("#gauge-figure").replaceChildren(...r.figures.map((f) => el("option", {value: f}, f)));
    if (!r.figures.length) say("the records hold no figures yet (start the desk with a records store, and check units)");
  });
}
async function runGauge(ev) {
  ev.preventDefault();
  await guarded(async () => {
    const data = Object.fromEntries(new FormData($("#gauge-form")).entries());
    const v = await api(`grr?figure=${encodeURIComponent(data.figure)}&by=${data.by}`);
    const plots = v.plots.map((p) => el("div", {class: "plot", id: "gauge-plot-" + p.id}));
    $("#gauge-detail").replaceChildren(el("h2", {}, v.title), el("div", {class: "figures", id: "gauge-figures"},
      ...v.headline.map(figureCard)), ...plots, ...table("Conditions", ["condition", "value"], v.conditions),
      ...v.tables.flatMap((t) => table(t.title, t.columns, t.rows)),
      el("ul", {class: "notes"}, ...v.notes.map((n) => el("li", {}, n))));
    for (let i = 0; i < v.plots.length; i++) await drawPlot(plots[i], v.plots[i]);
    $("#gauge-detail").dataset.ready = data.figure;
  });
}

// ---- frame -------------------------------------------------------------------------------------------
async function refreshState() {
  const s = await api("state").catch(() => null);
  if (!s) return null;
  $("#where").textContent = `folder ${s.folder} · records ${s.records || "none"} · benchnf ${s.version}`;
  const a = $("#audio-state");
  a.textContent = s.audio ? "sound card: " + s.audio : "sound card idle";
  a.classList.toggle("busy", !!s.audio);
  return s;
}
window.addEventListener("DOMContentLoaded", async () => {
  for (const b of document.querySelectorAll(".rail button")) b.addEventListener("click", () => show(b.dataset.view));
  $("#upload").addEventListener("change", (e) => upload(e.target));
  $("#live-start").addEventListener("click", liveStart);
  $("#live-stop").addEventListener("click", () => guarded(async () => { await api("live/stop", {}); refreshState(); }));
  $("#live-reset").addEventListener("click", () => guarded(() => api("live/reset", {})));
  $("#live-hold").addEventListener("click", (e) => { live.held = !live.held; e.target.setAttribute("aria-pressed", live.held); if (!live.held) drawLive(); });
  $("#live-save").addEventListener("click", () => guarded(async () => say("kept as " + (await api("live/save", {})).saved, true)));
  $("#ref-kind").addEventListener("change", async () => { await refFiles(); await liveReference(); });
  $("#ref-file").addEventListener("change", liveReference);
  $("#plan-open").addEventListener("click", planOpen);
  $("#check-form").addEventListener("submit", runCheck);
  $("#gauge-form").addEventListener("submit", runGauge);
  $("#analyse-form").addEventListener("submit", analyseFolder);
  const s = await refreshState();
  await loadResultsList(s && s.opened);
  document.body.dataset.ready = "1";
});
