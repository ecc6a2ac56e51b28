// The Trip points page: every change asks POST /api/view/trip (debounced)
// and redraws. A bad value keeps the last good result on screen and marks
// the field the server named.
import { pageData, api, debounce, draw, fmtOhm, wireTwins, showProblem, clearProblems } from "./common.js";

const data = pageData();
const form = document.getElementById("trip-form");
const problemBox = document.getElementById("trip-problem");
const $ = id => document.getElementById(id);
const parts = Object.fromEntries(data.parts.map(p => [p.id, p]));
const presets = Object.fromEntries(data.presets.map(p => [p.id, p]));
const NUMBER = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;
const UNIT = { "°C": "°C", "lx": "lux", "travel": "travel" };
const EXPONENT = { ntc_beta: "tolerances.beta_pct", ldr: "tolerances.gamma_pct" };
const CUSTOM_DEFAULTS = {
  ntc_beta: { r_nominal_ohm: "10k", beta_k: 3950, t_nominal_c: 25 },
  ldr: { r_ref_ohm: "20k", gamma: 0.7, lux_ref: 10 },
};

// Starting targets when the stimulus changes unit (typical, invented): [trip, release, trim from, trim to].
const UNIT_DEFAULTS = { "°C": [60, 55, 50, 70], "lx": [10, 25, 3, 30], "travel": [0.6, 0.5, 0.3, 0.8] };

let seq = 0;
let shownUnit = null;

const field = name => form.querySelector(`[name="${CSS.escape(name)}"]`);
const text = name => (field(name)?.value ?? "").trim();
function value(raw) {
  const s = String(raw ?? "").trim();
  if (s === "") return undefined;
  return NUMBER.test(s) ? Number(s) : s;  // text goes to the server, which names the field
}
function put(obj, key, v) { if (v !== undefined) obj[key] = v; }
function setValue(name, v) { const el = field(name); if (el) el.value = v === undefined || v === null ? "" : String(v); }
const scaled = (v, k) => (typeof v === "number" ? v * k : v);

function kind() {
  const src = field("source").value;
  return src.startsWith("custom:") ? src.slice(7) : (parts[src] || {}).kind;
}
function unit() {
  const src = field("source").value;
  if (src.startsWith("custom:")) return src === "custom:ldr" ? "lx" : "°C";
  return (parts[src] || {}).unit || "°C";
}

function sensorInputs() {
  const src = field("source").value;
  if (!src.startsWith("custom:")) return { part: src };
  const k = src.slice(7);
  const sensor = { kind: k };
  form.querySelectorAll(`.custom[data-kind="${k}"] input`).forEach(el => put(sensor, el.name.slice(7), value(el.value)));
  return sensor;
}

function getInputs() {
  const inputs = { sensor: sensorInputs(), supply_v: value(text("supply_v")), sensor_at: field("sensor_at").value,
    target: {}, series: field("series").value, detector: {} };
  put(inputs.target, "trip", value(text("target.trip")));
  put(inputs.target, "release", value(text("target.release")));
  put(inputs.detector, "output_high_v", value(text("detector.output_high_v")));
  put(inputs.detector, "output_low_v", value(text("detector.output_low_v")));
  if (field("spread_on").checked) {
    const t = {};
    put(t, "resistor_pct", value(text("tolerances.resistor_pct")));
    put(t, "sensor_pct", value(text("tolerances.sensor_pct")));
    const exp = EXPONENT[kind()];
    if (exp) put(t, exp.split(".")[1], value(text("tolerances.exponent_pct")));
    put(t, "supply_pct", value(text("tolerances.supply_pct")));
    put(t, "offset_v", scaled(value(text("tolerances.offset_v")), 1e-3));  // the form shows mV
    inputs.tolerances = t;
    const mc = { distribution: field("monte_carlo.distribution").value };
    put(mc, "samples", value(text("monte_carlo.samples")));
    put(mc, "seed", value(text("monte_carlo.seed")));
    inputs.monte_carlo = mc;
  }
  if (field("adjust_on").checked) {
    const a = {};
    put(a, "min", value(text("adjust.min")));
    put(a, "max", value(text("adjust.max")));
    put(a, "pot_tolerance_pct", value(text("adjust.pot_tolerance_pct")));
    inputs.adjust = a;
  }
  return inputs;
}

function load(inputs) {
  const s = inputs.sensor || {};
  if (s.part) {
    field("source").value = s.part;
  } else {
    field("source").value = `custom:${s.kind}`;
    Object.entries(s).forEach(([k, v]) => { if (k !== "kind") setValue(`sensor.${k}`, v); });
  }
  setValue("supply_v", inputs.supply_v);
  field("sensor_at").value = inputs.sensor_at || "bottom";
  field("series").value = inputs.series || "E24";
  setValue("target.trip", inputs.target?.trip);
  setValue("target.release", inputs.target?.release);
  setValue("detector.output_high_v", inputs.detector?.output_high_v);
  setValue("detector.output_low_v", inputs.detector?.output_low_v ?? 0);
  const t = inputs.tolerances;
  field("spread_on").checked = Boolean(t || inputs.monte_carlo);
  setValue("tolerances.resistor_pct", t?.resistor_pct ?? 1);
  setValue("tolerances.sensor_pct", t?.sensor_pct);
  setValue("tolerances.exponent_pct", t?.beta_pct ?? t?.gamma_pct);
  setValue("tolerances.supply_pct", t?.supply_pct ?? 0);
  setValue("tolerances.offset_v", t && t.offset_v !== undefined ? +(t.offset_v * 1e3).toPrecision(6) : 5);
  const mc = inputs.monte_carlo || {};
  setValue("monte_carlo.samples", mc.samples ?? 5000);
  setValue("monte_carlo.seed", mc.seed ?? 1);
  field("monte_carlo.distribution").value = mc.distribution || "normal";
  const a = inputs.adjust;
  field("adjust_on").checked = Boolean(a);
  setValue("adjust.min", a?.min);
  setValue("adjust.max", a?.max);
  setValue("adjust.pot_tolerance_pct", a?.pot_tolerance_pct ?? 20);
  shownUnit = null;  // the inputs carry their own targets
  syncForm();
}

// Show the fields that apply: custom sensor values, the exponent tolerance, units.
function syncForm() {
  const k = kind();
  const src = field("source").value;
  form.querySelectorAll(".custom").forEach(box => {
    const on = src === `custom:${box.dataset.kind}`;
    if (on && box.hidden) {
      Object.entries(CUSTOM_DEFAULTS[box.dataset.kind]).forEach(([name, v]) => {
        if (!text(`sensor.${name}`)) setValue(`sensor.${name}`, v);
      });
    }
    box.hidden = !on;
  });
  const exp = field("tolerances.exponent_pct");
  const label = exp.closest("label");
  label.hidden = !EXPONENT[k];
  if (EXPONENT[k]) {
    exp.dataset.field = EXPONENT[k];
    label.querySelector(".label-text").firstChild.textContent = k === "ldr" ? "Slope γ " : "B value ";
  }
  const part = parts[src];
  const stated = part ? part.tolerances || {} : {};
  field("tolerances.sensor_pct").placeholder = part ? `part: ${stated.sensor_pct ?? stated.r0_pct ?? 0}` : "0";
  exp.placeholder = part ? `part: ${stated.beta_pct ?? stated.gamma_pct ?? 0}` : "0";
  if (shownUnit !== null && unit() !== shownUnit && UNIT_DEFAULTS[unit()]) {
    // °C figures mean nothing in lux: start the targets afresh.
    const [trip, release, lo, hi] = UNIT_DEFAULTS[unit()];
    setValue("target.trip", trip); setValue("target.release", release);
    setValue("adjust.min", lo); setValue("adjust.max", hi);
  }
  shownUnit = unit();
  const u = UNIT[unit()] || unit();
  form.querySelectorAll('[data-unit="stimulus"]').forEach(el => { el.textContent = `(${u})`; });
  $("trip-spread-fields").hidden = !field("spread_on").checked;
  $("trip-adjust-fields").hidden = !field("adjust_on").checked;
}

// ---- results ---------------------------------------------------------------

function factsHtml(items) {
  return items.map(([k, v]) => `<div><dt>${k}</dt><dd>${v}</dd></div>`).join("");
}
function esc(s) {
  return String(s).replace(/[&<>"]/g, c => ({ "&": "&amp;", "<": "&lt;", ">": "&gt;", '"': "&quot;" }[c]));
}
const volts = v => (v === null || v === undefined ? "—" : `${v.toFixed(v < 1 ? 4 : 3)} V`);

// On a phone, two legend entries per row instead of one each.
const narrow = window.matchMedia("(max-width: 600px)");
function show(id, fig) {
  if (narrow.matches) {
    fig = { ...fig, layout: { ...fig.layout, legend: { ...fig.layout.legend, entrywidth: 0.5, entrywidthmode: "fraction" } } };
  }
  draw($(id), fig);
}

function render(view) {
  const r = view.result;
  const t = view.text;
  $("trip-big").textContent = `${t.trip} / ${t.release}`;
  $("trip-big-note").textContent = `trip / release, output goes ${r.output_at_trip} at the trip`;
  $("trip-summary").textContent = view.summary;
  const facts = [
    ["Upper level (output high)", volts(r.thresholds_v.upper)],
    ["Lower level (output low)", volts(r.thresholds_v.lower)],
    ["Hysteresis band", `${(r.hysteresis_v * 1e3).toPrecision(3)} mV`],
    ["Output at the trip", r.output_at_trip],
    ["Reference node sees", esc(fmtOhm(r.reference_thevenin_ohm))],
    ["Sensor power at trip", `${(r.sensor_power_w.trip * 1e3).toPrecision(3)} mW`],
  ];
  if (r.self_heating_c) facts.push(["Self-heating at trip", `${r.self_heating_c.trip.toPrecision(2)} °C (reads warm)`]);
  $("trip-facts").innerHTML = factsHtml(facts);
  $("trip-parts").innerHTML = "<thead><tr><th>Resistor</th><th>Value</th><th>Exact</th></tr></thead><tbody>" +
    view.resistors.map(x => `<tr><td>${esc(x.role)}<br><span class="hint">${esc(x.where)}</span></td>` +
      `<td class="num"><strong>${esc(x.value)}</strong></td><td class="num muted">${esc(x.exact)}</td></tr>`).join("") +
    "</tbody>";
  $("trip-warnings").innerHTML = r.warnings.map(w => `<div class="notice warn">${esc(w)}</div>`).join("");
  show("trip-band", view.figures.band);

  const sp = r.spread;
  $("trip-spread-card").hidden = $("trip-spread-plot").hidden = !sp;
  if (sp) {
    $("trip-spread-text").textContent = t.spread;
    const w = sp.worst_case, mc = sp.monte_carlo;
    const rows = [["min (worst case)", w.trip.min, w.release.min], ["0.135 %", mc.trip.p0_135, mc.release.p0_135],
      ["median", mc.trip.p50, mc.release.p50], ["99.865 %", mc.trip.p99_865, mc.release.p99_865],
      ["max (worst case)", w.trip.max, w.release.max]];
    $("trip-spread-table").innerHTML = `<thead><tr><th>${esc(UNIT[unit()] || unit())}</th><th>Trip</th><th>Release</th></tr></thead><tbody>` +
      rows.map(([k, t, r]) => `<tr><td>${k}</td><td class="num">${fmtN(t)}</td><td class="num">${fmtN(r)}</td></tr>`).join("") + "</tbody>";
    show("trip-spread", view.figures.spread);
  }
  const a = r.adjust;
  $("trip-adjust-card").hidden = $("trip-adjust-plot").hidden = !a;
  if (a) {
    $("trip-adjust-text").textContent = t.adjust + (a.position_for_target !== undefined && a.position_for_target !== null
      ? ` The asked trip sits at ${(a.position_for_target * 100).toFixed(0)} % of travel.` : "");
    show("trip-adjust", view.figures.adjust);
  }
}

function fmtN(v) {
  if (v === null || v === undefined) return "—";
  const u = unit();
  return u === "lx" ? String(+v.toPrecision(3)) : v.toFixed(u === "°C" ? 2 : 3);
}

async function recompute() {
  const mine = ++seq;
  const inputs = getInputs();
  document.getElementById("trip-results").classList.add("busy");
  try {
    const view = await api("/api/view/trip", inputs);
    if (mine !== seq) return;
    clearProblems(form, problemBox);
    render(view);
  } catch (err) {
    if (mine !== seq) return;
    showProblem(problemBox, err, form);
  } finally {
    if (mine === seq) document.getElementById("trip-results").classList.remove("busy");
  }
}

const later = debounce(recompute, 250);
form.addEventListener("input", () => { syncForm(); later(); });
form.addEventListener("change", () => { syncForm(); later(); });
form.addEventListener("submit", e => { e.preventDefault(); recompute(); });
form.querySelectorAll("[data-preset]").forEach(btn => btn.addEventListener("click", () => {
  load(presets[btn.dataset.preset].inputs);
  recompute();
}));

if (data.inputs) load(data.inputs);
wireTwins(document);
if (data.view) render(data.view);
