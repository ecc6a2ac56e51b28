// The Bench page: inputs on the left; every change asks POST /api/view/bench
// (debounced) and redraws the result. A bad value leaves the last good result
// on screen and marks the field the server named.
//
// Hooks for other pages' scripts:
//   window.ohmpickBench.getInputs() / .load(inputs) / .last()
//   document "bench:result" event, detail {inputs, result}, after each recompute.
import { pageData, api, ApiError, fmt, fmtSI, debounce, draw, wireTwins, showProblem, clearProblems } from "./common.js";
import { parseValue as value, ensureOption, sensorForm } from "./sensor_form.js";
import { latestPost } from "./latest.js";

const data = pageData();
const form = document.getElementById("bench-form");
const problemBox = document.getElementById("bench-problem");
const results = document.getElementById("bench-results");
const objectiveSelect = document.getElementById("bench-objective");
const $ = id => document.getElementById(id);
const kinds = Object.fromEntries(data.kinds.map(k => [k.kind, k]));
const parts = Object.fromEntries(data.parts.map(p => [p.id, p]));
const objectives = Object.fromEntries(data.objectives.map(o => [o.value, o]));
const sensorFields = sensorForm(
  { form: "bench-form", part: "bench-part", kind: "bench-kind", notes: "bench-part-notes", lock: "bench-part-lock" },
  { kinds, parts }, { ohmDigits: 4 });
const { partSelect, kindSelect, groupOf } = sensorFields;

let last = null;  // {inputs, result} of the last good recompute
let shownKind = kindSelect.value;  // the kind whose fields are on screen

// ---- reading and writing the form ------------------------------------------

const field = name => form.querySelector(`[name="${CSS.escape(name)}"]`);
const text = name => (field(name)?.value ?? "").trim();

function put(obj, key, v) { if (v !== undefined) obj[key] = v; }

export function getInputs() {
  const inputs = {};
  put(inputs, "name", text("name") || undefined);
  inputs.sensor = sensorFields.read();
  const circuit = { supply_v: value(text("circuit.supply_v")), sensor_at: field("circuit.sensor_at").value };
  put(circuit, "load_ohm", value(text("circuit.load_ohm")));
  put(circuit, "parallel_ohm", value(text("circuit.parallel_ohm")));
  inputs.circuit = circuit;
  inputs.range = {};
  put(inputs.range, "min", value(text("range.min")));
  put(inputs.range, "max", value(text("range.max")));
  inputs.objective = objectiveSelect.value;
  inputs.series = field("series").value;
  const limits = {};
  put(limits, "min_ohm", value(text("limits.min_ohm")));
  put(limits, "max_ohm", value(text("limits.max_ohm")));
  const mw = value(text("limits.max_sensor_power_w"));
  put(limits, "max_sensor_power_w", typeof mw === "number" ? mw * 1e-3 : mw);  // the form shows mW
  inputs.limits = limits;
  put(inputs, "override_ohm", value(text("override_ohm")));
  // The accuracy objective's converter and tolerances come from its own card (accuracy_objective.js).
  Object.assign(inputs, window.ohmpickAccuracyExtras?.get() ?? {});
  return inputs;
}

function setValue(name, v) {
  const el = field(name);
  if (el) el.value = v === undefined || v === null ? "" : String(v);
}

function setRangeUnit(kind) {
  const unit = { "°C": "°C", "lx": "lux", "travel": "fraction of travel" }[kinds[kind]?.stimulus_unit] || "";
  form.querySelectorAll('[name="range.min"], [name="range.max"]').forEach(el => {
    const u = el.closest("label").querySelector(".unit");
    if (u) u.textContent = `(${unit})`;
  });
}

// Show the chosen kind's fields; a library part fills them read-only.
function syncSensor() {
  const kind = sensorFields.show();
  setRangeUnit(kind);
  shownKind = kind;
  const o = objectives[objectiveSelect.value];
  $("bench-objective-hint").textContent = o ? o.hint : "";
}

function stimulusUnitOf(kind) { return kinds[kind]?.stimulus_unit; }

// A new kind of stimulus needs a range in its own unit.
function resetRangeIfUnitChanged(before) {
  const kind = kindSelect.value;
  if (stimulusUnitOf(kind) !== stimulusUnitOf(before)) {
    setValue("range.min", kinds[kind].range.min);
    setValue("range.max", kinds[kind].range.max);
  }
}

// Put a saved design's inputs into the form (unknown keys are ignored).
function fill(inputs) {
  inputs = inputs || {};
  setValue("name", inputs.name);
  sensorFields.fill(inputs.sensor, { keepUnknownPart: true, resetMissing: true });
  const c = inputs.circuit || {};
  setValue("circuit.supply_v", c.supply_v);
  field("circuit.sensor_at").value = c.sensor_at === "top" ? "top" : "bottom";
  setValue("circuit.load_ohm", c.load_ohm);
  setValue("circuit.parallel_ohm", c.parallel_ohm);
  const r = inputs.range || {};
  setValue("range.min", r.min);
  setValue("range.max", r.max);
  if (inputs.objective) ensureOption(objectiveSelect, inputs.objective);
  if (inputs.series) ensureOption(field("series"), inputs.series);
  const lim = inputs.limits || {};
  setValue("limits.min_ohm", lim.min_ohm ?? 1);
  setValue("limits.max_ohm", lim.max_ohm ?? "10M");
  const w = lim.max_sensor_power_w;
  setValue("limits.max_sensor_power_w", typeof w === "number" ? +(w * 1e3).toPrecision(6) : w);
  // A design saved with its resistor in the circuit compares that resistor.
  setValue("override_ohm", inputs.override_ohm ?? c.fixed_ohm);
  syncSensor();
}

export function load(inputs) {
  fill(inputs);
  window.ohmpickAccuracyExtras?.set?.(inputs);
  return recompute();
}

// ---- drawing the result ------------------------------------------------------

const unitText = u => (u === "lx" ? "lux" : u === "travel" ? "of travel" : u);
function at(value, unit) { return unit === "travel" ? `position ${fmt(value, 3)}` : `${fmt(value, 4)} ${unitText(unit)}`; }
const kelvins = v => (v === null || v === undefined ? "—" : `${v >= 100 ? v.toFixed(0) : fmt(v, 2)} °C`);
const pct = v => (v === null || v === undefined ? "—" : `${fmt(v, 3)} %`);
const volts = v => fmtSI(v, "V", 4);
const watts = v => fmtSI(v, "W", 3);

function scoreText(v, unit) {
  if (v === null || v === undefined) return "—";
  return unit === "%" ? pct(v) : fmtSI(v, unit, 4);
}
function worseText(abs, rel, unit) {
  if (abs === null || abs === undefined) return ["—", "—"];
  if (Math.abs(abs) < 1e-15) return ["same", "0 %"];
  const word = abs > 0 ? "worse" : "better";
  const a = unit === "%" ? `${fmt(Math.abs(abs), 3)} points` : fmtSI(Math.abs(abs), unit, 3);
  return [`${a} ${word}`, rel === null ? "—" : `${fmt(Math.abs(rel), 3)} %`];
}

function facts(list) {
  const dl = $("bench-facts");
  dl.replaceChildren(...list.filter(Boolean).map(([k, v, title]) => {
    const div = document.createElement("div");
    const dt = document.createElement("dt"); dt.textContent = k;
    const dd = document.createElement("dd"); dd.textContent = v;
    if (title) div.title = title;
    div.append(dt, dd);
    return div;
  }));
}

function rowFacts(row, result) {
  const u = result.units, rng = result.range, m = row.metrics;
  return [
    [`Output at ${at(rng.min, u.stimulus)}`, volts(row.ends_v.min)],
    [`Output at ${at(rng.max, u.stimulus)}`, volts(row.ends_v.max)],
    ["Swing", volts(m.swing_v)],
    ["Nonlinearity (end-point)", pct(m.nonlinearity_pct)],
    ["Worst sensitivity", fmtSI(m.min_sensitivity, u.sensitivity, 4)],
    ["Max sensor power", watts(m.max_sensor_power_w)],
    row.self_heating_c !== null && row.self_heating_c !== undefined
      ? ["Self-heating, worst", kelvins(row.self_heating_c), "maximum sensor power ÷ the part's dissipation constant"] : null,
  ];
}

function cell(tag, content, cls) {
  const el = document.createElement(tag);
  if (content instanceof Node) el.append(content); else el.textContent = content;
  if (cls) el.className = cls;
  return el;
}
// Cells do not wrap (numbers with units stay whole) except the columns in `wrap`.
function tableRow(cells, tag = "td", cls = "", wrap = []) {
  const tr = document.createElement("tr");
  if (cls) tr.className = cls;
  cells.forEach((c, i) => tr.append(cell(tag, c, wrap.includes(i) ? "wrap" : "")));
  return tr;
}
const signed = text => (/^[0-9]/.test(text) && !/^0( |$)/.test(text) ? `+${text}` : text.replace(/^-/, "−"));

function renderRunners(result) {
  const unit = result.units.score, table = $("bench-runners-table");
  const head = tableRow(["Value", `${result.objective.label} (${unit})`, "Against the recommendation", ""], "th", "", [1, 2]);
  const rows = [result.recommended, ...result.runners_up].map((row, i) => {
    if (i === 0) return tableRow([row.label, scoreText(row.score, unit), "recommended", ""], "td", "picked");
    const [abs, rel] = worseText(row.worse_abs, row.worse_pct, unit);
    const button = cell("button", "Compare");
    button.type = "button";
    button.className = "quiet small";
    button.setAttribute("aria-label", `Compare ${row.label} with the recommendation`);
    button.addEventListener("click", () => { setValue("override_ohm", row.label); recompute(); });
    return tableRow([row.label, scoreText(row.score, unit), `${abs} (${rel})`, button], "td", "", [2]);
  });
  const thead = document.createElement("thead"); thead.append(head);
  const tbody = document.createElement("tbody"); tbody.append(...rows);
  table.replaceChildren(thead, tbody);
  $("bench-runners").hidden = false;
}

function renderCompare(result) {
  const mine = result.override, box = $("bench-compare");
  if (!mine) { box.hidden = true; return; }
  const rec = result.recommended, u = result.units, rng = result.range;
  const lines = [
    ["Resistor", rec.label, mine.label, ""],
    [`${result.objective.label} (${u.score})`, scoreText(rec.score, u.score), scoreText(mine.score, u.score),
      worseText(mine.worse_abs, mine.worse_pct, u.score).join(" (") + ")"],
    [`Output at ${at(rng.min, u.stimulus)}`, volts(rec.ends_v.min), volts(mine.ends_v.min), signed(volts(mine.ends_v.min - rec.ends_v.min))],
    [`Output at ${at(rng.max, u.stimulus)}`, volts(rec.ends_v.max), volts(mine.ends_v.max), signed(volts(mine.ends_v.max - rec.ends_v.max))],
    ["Swing", volts(rec.metrics.swing_v), volts(mine.metrics.swing_v), signed(volts(mine.metrics.swing_v - rec.metrics.swing_v))],
    ["Nonlinearity", pct(rec.metrics.nonlinearity_pct), pct(mine.metrics.nonlinearity_pct),
      signed(`${fmt(mine.metrics.nonlinearity_pct - rec.metrics.nonlinearity_pct, 3)} points`)],
    ["Worst sensitivity", fmtSI(rec.metrics.min_sensitivity, u.sensitivity, 4), fmtSI(mine.metrics.min_sensitivity, u.sensitivity, 4),
      signed(fmtSI(mine.metrics.min_sensitivity - rec.metrics.min_sensitivity, u.sensitivity, 3))],
    ["Max sensor power", watts(rec.metrics.max_sensor_power_w), watts(mine.metrics.max_sensor_power_w),
      signed(watts(mine.metrics.max_sensor_power_w - rec.metrics.max_sensor_power_w))],
  ];
  // The objective's own row already carries its metric.
  const same = { swing: "Swing", linearity: "Nonlinearity", sensitivity: "Worst sensitivity" }[result.objective.value];
  const shown = lines.filter(l => l[0] !== same);
  const thead = document.createElement("thead");
  thead.append(tableRow(["", "Recommended", "Yours (difference)"], "th", "", [0, 1, 2]));
  const tbody = document.createElement("tbody");
  // The difference sits under your value: three columns fit a phone.
  tbody.append(...shown.map(([label, rec, yours, diff]) => {
    const both = document.createDocumentFragment();
    both.append(yours);
    if (diff) both.append(Object.assign(document.createElement("span"), { className: "delta", textContent: diff }));
    return tableRow([label, rec, both], "td", "", [0]);
  }));
  $("bench-compare-table").replaceChildren(thead, tbody);
  box.hidden = false;
}

function renderNotices(result) {
  const box = $("bench-notices");
  const mains = result.notices.filter(n => n.level === "caution");
  $("bench-mains").hidden = mains.length === 0;
  box.replaceChildren(...result.notices.filter(n => n.level !== "caution").map(n => {
    const div = document.createElement("div");
    div.className = `notice ${n.level === "warn" ? "warn" : "info"}`;
    div.dataset.code = n.code || "";
    div.setAttribute("role", "status");
    div.textContent = n.text;
    return div;
  }));
  mains.forEach(n => {
    const div = document.createElement("div");
    div.className = "notice caution"; div.textContent = n.text;
    box.append(div);
  });
}

export function render(result) {
  renderNotices(result);
  if (result.mode === "divider") {
    const d = result.divider, u = result.units, m = d.metrics, rng = result.range;
    $("bench-headline-title").textContent = "No fixed resistor to choose";
    $("bench-value").textContent = "pot as divider";
    $("bench-value-note").textContent = result.sensor.label;
    $("bench-score").textContent = "The track forms both arms; the output is read at the wiper.";
    facts([
      [`Output at ${at(rng.min, u.stimulus)}`, volts(d.ends_v.min)],
      [`Output at ${at(rng.max, u.stimulus)}`, volts(d.ends_v.max)],
      ["Swing", volts(m.swing_v)],
      ["Nonlinearity (end-point)", pct(m.nonlinearity_pct)],
      ["Worst sensitivity", fmtSI(m.min_sensitivity, u.sensitivity, 4)],
      ["Max track power", watts(m.max_sensor_power_w)],
      ["Largest source resistance", fmtSI(d.max_thevenin_ohm, "Ω", 3), "what the ADC sees at the wiper"],
      d.loading ? ["Biggest drop from the load", `${volts(d.loading.max_drop_v)} at position ${fmt(d.loading.at, 3)}`] : null,
    ]);
    $("bench-compare").hidden = true;
    $("bench-runners").hidden = true;
  } else {
    const rec = result.recommended, s = result.solve;
    $("bench-headline-title").textContent = "Recommended fixed resistor";
    $("bench-value").textContent = rec.label;
    $("bench-value-note").textContent = s.series === "exact"
      ? "exact optimum (no series)" : `${s.series} value · exact optimum ${result.exact.label}`;
    $("bench-score").textContent = `${result.objective.label}: ${scoreText(rec.score, result.units.score)}` +
      (s.series === "exact" ? "" : ` (exact optimum ${scoreText(result.exact.score, result.units.score)})`);
    facts(rowFacts(rec, result));
    renderCompare(result);
    renderRunners(result);
  }
  draw($("bench-output"), result.figures.output);
  draw($("bench-sensitivity"), result.figures.sensitivity);
}

// ---- recomputing -----------------------------------------------------------

export const recompute = latestPost("/api/view/bench", getInputs, results, {
  done(inputs, result) {
    clearProblems(form, problemBox);
    $("bench-stale").hidden = true;
    render(result);
    last = { inputs, result };
    document.dispatchEvent(new CustomEvent("bench:result", { detail: { inputs, result } }));
  },
  failed(problem) {
    showProblem(problemBox, problem, form);
    // A marked field folded away in the limits is unfolded so the message shows.
    const marked = form.querySelector('[aria-invalid="true"]');
    if (marked || String(problem.field).startsWith("limits")) {
      (marked || form.querySelector(".limits"))?.closest("details")?.setAttribute("open", "");
    }
    if (last) {
      problemBox.append(" The results shown are for the last valid inputs.");
      $("bench-stale").hidden = false;
    }
  },
});

const soon = debounce(recompute, 250);

form.addEventListener("input", e => { if (e.target !== partSelect && e.target !== kindSelect) soon(); });
form.addEventListener("change", e => {
  if (e.target === partSelect || e.target === kindSelect) {
    const before = shownKind;
    // The demo's descriptive name no longer fits another sensor.
    if (text("name") === data.inputs.name) setValue("name", "");
    syncSensor();
    resetRangeIfUnitChanged(before);
    recompute();
  } else if (e.target === objectiveSelect) {
    syncSensor();
    soon();
  }
});
form.addEventListener("submit", e => { e.preventDefault(); recompute(); });
$("bench-clear-override").addEventListener("click", () => { setValue("override_ohm", ""); recompute(); });
$("bench-edit-part").addEventListener("click", () => {
  const part = parts[partSelect.value];
  if (!part) return;
  partSelect.value = "";
  syncSensor();  // keeps the part's values in the now editable fields
  const first = groupOf(kindSelect.value).querySelector("input");
  if (first) first.focus();
  recompute();
});

// Parts added on another page (another tab) appear without a reload.
let partsFetched = 0;
async function refreshParts() {
  if (Date.now() - partsFetched < 5000) return;
  partsFetched = Date.now();
  let list;
  try { list = await api("/api/parts"); } catch { return; }
  const key = l => l.map(p => `${p.id}\u0000${p.name}`).sort().join("\u0001");
  if (key(list) === key(Object.values(parts))) return;  // unchanged: leave an open list alone
  const chosen = partSelect.value;
  for (const id of Object.keys(parts)) delete parts[id];
  list.forEach(p => { parts[p.id] = p; });
  const own = partSelect.options[0];
  const groups = data.kinds.map(k => {
    const members = list.filter(p => p.kind === k.kind);
    if (!members.length) return null;
    const g = Object.assign(document.createElement("optgroup"), { label: k.label });
    members.forEach(p => g.append(new Option(p.name, p.id)));
    return g;
  }).filter(Boolean);
  partSelect.replaceChildren(own, ...groups);
  if (chosen) ensureOption(partSelect, chosen, `${chosen} (not in the library)`);
  else partSelect.value = "";
}
partSelect.addEventListener("focus", refreshParts);

async function copyFromSaved(id) {
  try {
    const design = await api(`/api/designs/${encodeURIComponent(id)}`);
    await load(design.inputs);
    note("info", `Copied from the saved design “${design.name || id}”: changes here do not alter it.`);
  } catch (err) {
    const missing = err instanceof ApiError && err.status === 404;
    note("warn", missing ? `No saved design with id “${id}” (it may have been deleted). Showing the demo design.`
                         : `Could not open saved design “${id}”: ${err.message}`);
  }
}
function note(level, textContent) {
  const div = Object.assign(document.createElement("div"), { className: `notice ${level}`, textContent });
  div.dataset.code = "copy";
  $("bench-problem").after(div);
}

window.ohmpickBench = { getInputs, load, last: () => last, recompute };

// First paint from the page's embedded result: no request needed.
fill(data.inputs);
render(data.result);
last = { inputs: getInputs(), result: data.result };
wireTwins(results);
document.dispatchEvent(new CustomEvent("bench:result", { detail: last }));
const copy = new URLSearchParams(location.search).get("copy");
if (copy) copyFromSaved(copy);
