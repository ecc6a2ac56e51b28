// The accuracy page: inputs on the left; every change asks POST /api/view/accuracy
// (debounced) and redraws. A bad value keeps the last good result on screen and
// marks the field the server named. Inputs shown in other units than the API's
// (pF, µs, mW/K, %) carry data-scale: the number sent is the one typed × scale.
import { pageData, api, fmt, fmtOhm, debounce, draw, wireTwins, showProblem, clearProblems } from "./common.js";
import { parseValue, sensorForm } from "./sensor_form.js";
import { latestPost } from "./latest.js";

const data = pageData();
const form = document.getElementById("acc-form");
const $ = id => document.getElementById(id);
const problemBox = $("acc-problem");
const results = $("acc-results");
const kinds = Object.fromEntries(data.kinds.map(k => [k.kind, k]));
const parts = Object.fromEntries(data.parts.map(p => [p.id, p]));
const RANGE_UNIT = { "°C": "°C", "lx": "lux", "travel": "fraction of travel" };
const ERROR_UNIT = { "°C": "°C", "lx": "decades of lux", "travel": "of travel" };
const CONTRIBUTORS = {
  fixed: "Fixed resistor", sensor: "Sensor resistance", beta: "B value", gamma: "Slope γ", supply: "Supply",
  vref: "Reference", adc_gain: "Converter gain", adc_offset: "Converter offset", quantization: "Quantisation (½ LSB)",
  load: "Load", leads: "Lead resistance", self_heating: "Self-heating",
};

let last = null;
let shownKind = null;

const field = name => form.querySelector(`[name="${CSS.escape(name)}"]`);

// A number when the text is one (scaled to SI), otherwise the text so the server can name the field.
const value = el => parseValue(el.value, el.dataset.scale ? Number(el.dataset.scale) : 1);
const sensorFields = sensorForm({ form: "acc-form", part: "acc-part", kind: "acc-kind", notes: "acc-part-notes" },
                                { kinds, parts }, { parse: value });
const { partSelect, kindSelect } = sensorFields;

function shown(el) { return !el.disabled && !el.closest("[hidden]"); }
function setPath(obj, path, v) {
  const keys = path.split(".");
  let o = obj;
  keys.slice(0, -1).forEach(k => { o = o[k] = o[k] || {}; });
  o[keys[keys.length - 1]] = v;
}

export function getInputs() {
  const inputs = { sensor: sensorFields.read(), circuit: {}, range: {}, adc: {}, tolerances: {}, monte_carlo: {} };
  form.querySelectorAll("[data-field]").forEach(el => {
    const path = el.dataset.field;
    if (path.startsWith("sensor.") || !shown(el)) return;
    let v;
    if (el.type === "checkbox") v = el.checked;
    else if (el.tagName === "SELECT") v = el.value;
    else v = value(el);
    if (v !== undefined) setPath(inputs, path, v);
  });
  if (inputs.spec === undefined) inputs.spec = null;
  return inputs;
}

function setField(name, v, scale = 1) {
  const el = field(name);
  if (!el) return;
  if (v === undefined || v === null) { el.value = ""; return; }
  el.value = typeof v === "number" ? String(+(v / scale).toPrecision(6)) : String(v);
}

// Which inputs make sense: β for a beta NTC, γ for an LDR, self-heating for
// temperature sensors, no fixed resistor for a pot wired as a divider, the
// reference only without ratiometric.
function syncVisibility() {
  const kind = kindSelect.value;
  const k = kinds[kind];
  const divider = sensorFields.isPotDivider();
  const ratiometric = field("adc.ratiometric").checked;
  const toggle = (sel, on) => form.querySelectorAll(sel).forEach(el => {
    el.hidden = !on;
    el.querySelectorAll("input, select").forEach(i => { i.disabled = !on; });
  });
  toggle(".fixed-only", !divider);
  toggle(".absolute-only", !ratiometric);
  toggle(".heat-only", k.quantity === "temperature");
  field("tolerances.beta_pct").closest("label").hidden = kind !== "ntc_beta";
  field("tolerances.beta_pct").disabled = kind !== "ntc_beta";
  field("tolerances.gamma_pct").closest("label").hidden = kind !== "ldr";
  field("tolerances.gamma_pct").disabled = kind !== "ldr";
  const mine = field("fixed_from").value === "given";
  field("circuit.fixed_ohm").closest("label").hidden = divider || !mine;
  field("circuit.fixed_ohm").disabled = divider || !mine;
  const unit = RANGE_UNIT[k.stimulus_unit] || "";
  form.querySelectorAll('[name="range.min"], [name="range.max"]').forEach(el => {
    el.closest("label").querySelector(".unit").textContent = `(${unit})`;
  });
  field("spec").closest("label").querySelector(".unit").textContent = `(± ${ERROR_UNIT[k.stimulus_unit]})`;
}

// Show the chosen kind's fields; a library part fills them read-only.
function syncSensor(fromPart) {
  const kind = sensorFields.show();
  const part = parts[partSelect.value];
  if (part && fromPart) {
    const t = part.tolerances || {};
    setField("tolerances.sensor_pct", t.sensor_pct ?? 0);
    setField("tolerances.beta_pct", t.beta_pct);
    setField("tolerances.gamma_pct", t.gamma_pct);
    setField("dissipation_w_per_k", part.dissipation_w_per_k, 1e-3);
  }
  if (shownKind && kinds[shownKind].stimulus_unit !== kinds[kind].stimulus_unit) {
    setField("range.min", kinds[kind].range.min);
    setField("range.max", kinds[kind].range.max);
    setField("spec", kind === "ldr" ? 0.1 : kind === "pot" ? 0.01 : 1);
  }
  shownKind = kind;
  syncVisibility();
}

function getPath(obj, path) {
  return path.split(".").reduce((o, k) => (o === undefined || o === null ? undefined : o[k]), obj);
}

// Put a set of inputs (the view's own, a saved design's) into the form; absent values clear their field.
function fill(inputs) {
  sensorFields.fill(inputs.sensor);
  const defaults = { "adc.bits": 12, "adc.ratiometric": true, "monte_carlo.samples": 10000, "monte_carlo.seed": 1,
                     "monte_carlo.distribution": "normal", "circuit.sensor_at": "bottom", "series": "E24" };
  form.querySelectorAll("[data-field]").forEach(el => {
    const path = el.dataset.field;
    if (path.startsWith("sensor.")) return;
    let v = getPath(inputs, path);
    if (v === undefined || v === null) v = defaults[path];
    if (el.type === "checkbox") el.checked = v === undefined ? false : !!v;
    else if (el.tagName === "SELECT") { if (v !== undefined) el.value = String(v); }
    else setField(path, v, el.dataset.scale ? Number(el.dataset.scale) : 1);
  });
  const c = inputs.circuit || {};
  field("fixed_from").value = inputs.fixed_from || (c.fixed_ohm ? "given" : "swing");
  shownKind = null;
  syncSensor(false);
}

// ---- drawing ------------------------------------------------------------------

const unitOf = r => r.sensor.error_word;
function err(v, r) {
  if (v === null || v === undefined) return "unbounded";
  return `±${Math.abs(v) < 1e-12 ? "0" : fmt(v, 2)} ${unitOf(r)}`;
}
function where(v, r) {
  return r.sensor.stimulus_unit === "travel" ? `travel ${fmt(v, 3)}` : `${fmt(v, 4)} ${RANGE_UNIT[r.sensor.stimulus_unit]}`;
}
function at(v, r) { return v === null || v === undefined ? "" : ` at ${where(v, r)}`; }

function facts(el, list) {
  el.replaceChildren(...list.filter(Boolean).map(([k, v, title]) => {
    const div = document.createElement("div");
    const dt = document.createElement("dt"); dt.textContent = k;
    const dd = document.createElement("dd"); dd.textContent = v;
    if (title) div.title = title;
    div.append(dt, dd);
    return div;
  }));
}

function renderHeadline(r) {
  const h = r.headline;
  $("acc-summary").textContent = r.summary_text;
  $("acc-yield").textContent = r.yield_text || "Give a spec to see the yield.";
  const source = { swing: "largest-swing pick", accuracy: "most accurate pick", given: "your value" }[h.fixed_from];
  facts($("acc-facts"), [
    h.fixed_ohm ? ["Fixed resistor", `${fmtOhm(h.fixed_ohm)} (${source})`] : ["Fixed resistor", "none (pot as divider)"],
    ["Worst case", err(h.worst_case.value, r) + at(h.worst_case.at, r), "every tolerance corner, plus ½ LSB and the systematic effects"],
    ["RSS", err(h.rss.value, r), "|bias| + root-sum-square of the tolerance contributors"],
    ["99.7 % of builds", err(h.builds.p997, r), "each build's worst error anywhere in the range"],
    h.yield !== null && h.yield !== undefined ? ["Yield", `${fmt(h.yield * 100, 4)} % within ±${fmt(h.spec, 3)} ${unitOf(r)}`] : null,
    ["Resolution, worst", `${fmt(h.resolution.value, 3)} ${unitOf(r)} per LSB`],
    h.self_heating.value ? ["Self-heating, worst", `${fmt(h.self_heating.value, 2)} ${unitOf(r)}${at(h.self_heating.at, r)}`] : null,
    r.picks.swing && h.fixed_from !== "swing" ? ["Largest-swing pick", fmtOhm(r.picks.swing)] : null,
    r.picks.accuracy && h.fixed_from !== "accuracy" ? ["Most accurate pick", fmtOhm(r.picks.accuracy)] : null,
  ]);
}

function renderTable(r) {
  const b = r.budget, c = b.contributors;
  const worstAt = b.worst_case.indexOf(Math.max(...b.worst_case.filter(v => v !== null)));
  const head = document.createElement("thead");
  const hr = document.createElement("tr");
  [["Contributor"], [`At the worst point (${where(b.stimulus[worstAt], r)})`], ["Largest in the range"]]
    .forEach(([t]) => { const th = document.createElement("th"); th.textContent = t; hr.append(th); });
  head.append(hr);
  const body = document.createElement("tbody");
  const row = (name, here, max, cls) => {
    const tr = document.createElement("tr");
    if (cls) tr.className = cls;
    [name, here, max].forEach(t => { const td = document.createElement("td"); td.textContent = t; tr.append(td); });
    body.append(tr);
  };
  // In the budget's own order (the page's embedded JSON arrives with its keys sorted).
  const order = [...Object.keys(CONTRIBUTORS).filter(k => k in c), ...Object.keys(c).filter(k => !(k in CONTRIBUTORS))];
  order.map(k => [k, c[k]]).forEach(([k, v]) => {
    const finite = v.filter(x => x !== null);
    row(CONTRIBUTORS[k] || k, err(v[worstAt], r), err(finite.length ? Math.max(...finite) : null, r));
  });
  row("Worst case", err(b.worst_case[worstAt], r), err(r.headline.worst_case.value, r), "picked");
  row("RSS", err(b.rss[worstAt], r), err(r.headline.rss.value, r));
  $("acc-table").replaceChildren(head, body);
}

function renderSettling(r) {
  const s = r.budget.settling;
  const secs = v => (v === null || v === undefined ? "—" : fmtSec(v));
  if (!s) {
    $("acc-settling-verdict").textContent = "Give the converter's sampling capacitor and acquisition time, or a capacitor on the pin, to check how the divider drives the input.";
    facts($("acc-settling-facts"), [["Source resistance, worst", fmtOhm(Math.max(...r.budget.thevenin_ohm.filter(v => v !== null)))]]);
    $("acc-settling-fixes").replaceChildren();
    $("acc-settling-verdict").className = "";
    return;
  }
  $("acc-settling-verdict").textContent = s.verdict;
  $("acc-settling-verdict").className = s.ok === false ? "notice warn" : "";
  facts($("acc-settling-facts"), [
    ["Source resistance, worst", fmtOhm(s.source_ohm) + at(s.source_at, r)],
    s.required_acquisition_s !== undefined ? ["Acquisition needed", secs(s.required_acquisition_s)] : null,
    s.max_source_ohm !== undefined ? ["Largest source allowed", fmtOhm(s.max_source_ohm)] : null,
    s.min_filter_f !== undefined ? ["Pin capacitor to hold ½ LSB", `≥ ${fmtFarad(s.min_filter_f)}`] : null,
    s.min_interval_s !== undefined ? ["Time between samples", `≥ ${secs(s.min_interval_s)}`] : null,
    s.power_up_s !== undefined ? ["Wait after switch-on", secs(s.power_up_s)] : null,
  ]);
  $("acc-settling-fixes").replaceChildren(...(s.fixes || []).map(t => Object.assign(document.createElement("li"), { textContent: t })));
}
function fmtSec(v) {
  if (v === 0) return "0 s";
  const steps = [[1, "s"], [1e-3, "ms"], [1e-6, "µs"], [1e-9, "ns"]];
  for (const [k, u] of steps) if (Math.abs(v) >= k * 0.9995) return `${fmt(v / k, 3)} ${u}`;
  return `${fmt(v / 1e-12, 3)} ps`;
}
function fmtFarad(v) {
  const steps = [[1e-3, "mF"], [1e-6, "µF"], [1e-9, "nF"], [1e-12, "pF"]];
  for (const [k, u] of steps) if (Math.abs(v) >= k * 0.9995) return `${fmt(v / k, 3)} ${u}`;
  return `${fmt(v / 1e-15, 3)} fF`;
}

function renderNotices(r) {
  $("acc-notices").replaceChildren(...r.notices.map(n => {
    const div = document.createElement("div");
    div.className = `notice ${n.level === "caution" ? "caution" : n.level === "warn" ? "warn" : "info"}`;
    div.dataset.code = n.code || "";
    div.setAttribute("role", "status");
    div.textContent = n.text;
    return div;
  }));
}

export function render(r) {
  renderNotices(r);
  renderHeadline(r);
  renderTable(r);
  renderSettling(r);
  draw($("acc-errors"), r.figures.errors);
  draw($("acc-contributors"), r.figures.contributors);
  draw($("acc-output"), r.figures.output);
}

// ---- recomputing ----------------------------------------------------------------

export const recompute = latestPost("/api/view/accuracy", getInputs, results, {
  done(inputs, result) {
    clearProblems(form, problemBox);
    render(result);
    last = { inputs, result };
  },
  failed(problem) {
    showProblem(problemBox, problem, form);
    if (last) problemBox.append(" The results shown are for the last valid inputs.");
  },
});

function save(name, type, text) {
  const url = URL.createObjectURL(new Blob([text], { type }));
  const a = Object.assign(document.createElement("a"), { href: url, download: name });
  document.body.appendChild(a); a.click(); a.remove();
  setTimeout(() => URL.revokeObjectURL(url), 1000);
}

// The budget request behind what is shown: the view's inputs with the fixed resistor filled in.
function budgetRequest() {
  const req = JSON.parse(JSON.stringify(last.result.inputs));
  delete req.fixed_from;
  delete req.series;
  return req;
}

const soon = debounce(recompute, 300);
form.addEventListener("input", e => { if (e.target.tagName !== "SELECT" && e.target.type !== "checkbox") soon(); });
form.addEventListener("change", e => {
  if (e.target === partSelect || e.target === kindSelect) syncSensor(e.target === partSelect);
  else syncVisibility();
  if (e.target.tagName === "SELECT" || e.target.type === "checkbox") recompute();
});
form.addEventListener("submit", e => { e.preventDefault(); recompute(); });
$("acc-csv").addEventListener("click", async () => {
  if (!last) return;
  try {
    save("accuracy-budget.csv", "text/csv", await api("/api/budget?format=csv", budgetRequest()));
  } catch (e) { showProblem(problemBox, e, form); }
});
$("acc-json").addEventListener("click", () => {
  if (last) save("accuracy.json", "application/json", JSON.stringify(last.result, null, 1));
});

window.ohmpickAccuracy = { getInputs, load: inputs => { fill(inputs); return recompute(); }, last: () => last, recompute };

fill(data.inputs);
render(data.result);
last = { inputs: getInputs(), result: data.result };
wireTwins(results);
// Another page (the Bench) may hand over its design: /accuracy#inputs=<JSON>.
if (location.hash.startsWith("#inputs=")) {
  try {
    fill(JSON.parse(decodeURIComponent(location.hash.slice("#inputs=".length))));
    recompute();
  } catch (e) {
    showProblem(problemBox, { message: "The design handed to this page could not be read; showing the demo design.", field: "" }, form);
  }
}
