// Accuracy on the Bench: when the objective is "accuracy", a card in
// <div id="bench-extras"> takes the converter and the tolerances the ranking
// should use, and shows the error budget of the recommended resistor.
//
// The Bench reads the settings through window.ohmpickAccuracyExtras.get()
// ({adc, tolerances, dissipation_w_per_k}, or null for other objectives) and
// is asked to recompute through window.ohmpickBench.recompute().
import { api, ApiError, fmtOhm, debounce } from "./common.js";

const host = document.getElementById("bench-extras");
const NUMBER = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;
const SERIES_PCT = { E3: 40, E6: 20, E12: 10, E24: 5, E48: 2, E96: 1, E192: 0.5 };  // IEC 60063 usual tolerances

function input(name, label, unit, value, hint) {
  const wrap = document.createElement("label");
  wrap.innerHTML = `<span class="label-text"></span><input type="text" inputmode="decimal" autocomplete="off"><span class="hint"></span><span class="field-error" aria-live="polite"></span>`;
  wrap.querySelector(".label-text").textContent = unit ? `${label} (${unit})` : label;
  const el = wrap.querySelector("input");
  el.name = `acc.${name}`;
  el.dataset.field = name;
  el.value = value;
  wrap.querySelector(".hint").textContent = hint || "";
  return wrap;
}

function build() {
  const card = document.createElement("section");
  card.className = "card";
  card.id = "bench-accuracy";
  card.hidden = true;
  card.setAttribute("aria-labelledby", "bench-accuracy-title");
  const title = Object.assign(document.createElement("h2"), { id: "bench-accuracy-title", textContent: "Accuracy settings" });
  const lede = Object.assign(document.createElement("p"), { className: "hint",
    textContent: "The ranking uses the worst-case reading error over the range with this converter and these tolerances." });
  const fields = document.createElement("div");
  fields.className = "fields";
  const ratio = document.createElement("label");
  ratio.className = "inline";
  ratio.innerHTML = `<input type="checkbox" name="acc.adc.ratiometric" data-field="adc.ratiometric" checked> ratiometric`;
  fields.append(
    input("adc.bits", "Converter bits", "", "12", "8 to 24"), ratio,
    input("adc.vref_v", "Reference", "V", "", "own reference only"),
    input("tolerances.fixed_pct", "Fixed resistor", "± %", "1"),
    input("tolerances.sensor_pct", "Sensor", "± %", "1"),
    input("tolerances.beta_pct", "B value", "± %", ""),
    input("tolerances.gamma_pct", "Slope γ", "± %", ""),
    input("tolerances.supply_pct", "Supply", "± %", "5"),
    input("dissipation_w_per_k", "Dissipation constant", "mW/K", "", "self-heating; blank: none"),
  );
  const problem = Object.assign(document.createElement("div"), { className: "notice error", hidden: true, id: "bench-accuracy-problem" });
  const summary = Object.assign(document.createElement("p"), { id: "bench-accuracy-summary" });
  const link = Object.assign(document.createElement("a"), { id: "bench-accuracy-link", href: "/accuracy", textContent: "The whole budget on the Accuracy page" });
  card.append(title, lede, fields, problem, summary, link);
  return card;
}

const card = host ? build() : null;
if (card) host.append(card);
const field = name => card.querySelector(`[data-field="${name}"]`);
let touched = new Set();  // fields the engineer typed in: a part no longer overwrites them
let lastPart = null;

function number(name, scale = 1) {
  const el = field(name);
  const s = el.value.trim();
  if (s === "" || el.closest("label").hidden) return undefined;
  return NUMBER.test(s) ? +(Number(s) * scale).toPrecision(12) : s;
}

function settings() {
  const adc = { bits: number("adc.bits"), ratiometric: field("adc.ratiometric").checked };
  if (!adc.ratiometric) adc.vref_v = number("adc.vref_v");
  const tolerances = {};
  for (const k of ["fixed_pct", "sensor_pct", "beta_pct", "gamma_pct", "supply_pct"]) {
    const v = number(`tolerances.${k}`);
    if (v !== undefined) tolerances[k] = v;
  }
  const out = { adc, tolerances };
  const delta = number("dissipation_w_per_k", 1e-3);
  if (delta !== undefined) out.dissipation_w_per_k = delta;
  return out;
}

function objectiveIsAccuracy() {
  const select = document.getElementById("bench-objective");
  return !!select && select.value === "accuracy";
}

// A saved or copied design brings its own converter and tolerances back into the card.
function restore(inputs) {
  if (!card || !inputs) return;
  const put = (name, v, scale = 1) => {
    if (v === undefined || v === null) return;
    field(name).value = typeof v === "number" ? String(+(v * scale).toPrecision(6)) : String(v);
    touched.add(name);
  };
  const adc = inputs.adc || {};
  put("adc.bits", adc.bits);
  if (adc.ratiometric !== undefined) field("adc.ratiometric").checked = !!adc.ratiometric;
  put("adc.vref_v", adc.vref_v);
  for (const [k, v] of Object.entries(inputs.tolerances || {})) if (field(`tolerances.${k}`)) put(`tolerances.${k}`, v);
  put("dissipation_w_per_k", inputs.dissipation_w_per_k, 1e3);  // the card shows mW/K
}

window.ohmpickAccuracyExtras = { get: () => (card && objectiveIsAccuracy() ? settings() : null), set: restore };

function showKindFields(kind) {
  field("tolerances.beta_pct").closest("label").hidden = kind !== "ntc_beta";
  field("tolerances.gamma_pct").closest("label").hidden = kind !== "ldr";
  field("dissipation_w_per_k").closest("label").hidden = !["ntc_beta", "ntc_sh", "rtd"].includes(kind);
  field("adc.vref_v").closest("label").hidden = field("adc.ratiometric").checked;
}

async function adoptPart(id) {
  if (!id || id === lastPart) return;
  lastPart = id;
  try {
    const part = await api(`/api/parts/${encodeURIComponent(id)}`);
    const t = part.tolerances || {};
    const put = (name, v) => { if (!touched.has(name)) field(name).value = v === undefined || v === null ? "" : String(v); };
    put("tolerances.sensor_pct", t.sensor_pct ?? t.r0_pct ?? 0);
    put("tolerances.beta_pct", t.beta_pct);
    put("tolerances.gamma_pct", t.gamma_pct);
    put("dissipation_w_per_k", part.dissipation_w_per_k ? +(part.dissipation_w_per_k * 1e3).toPrecision(6) : "");
  } catch (e) { /* the Bench itself reports an unknown part */ }
}

let seq = 0;
async function refresh(detail) {
  if (!card) return;
  card.hidden = !objectiveIsAccuracy();
  if (card.hidden || !detail || !detail.result) return;
  const { inputs, result } = detail;
  const kind = inputs.sensor.part ? (result.sensor || {}).kind : inputs.sensor.kind;
  showKindFields(kind);
  if (inputs.sensor.part) await adoptPart(inputs.sensor.part);
  const fixed = result.recommended ? result.recommended.fixed_ohm : null;
  const body = { sensor: inputs.sensor, circuit: { ...inputs.circuit }, range: inputs.range, ...settings(),
                 monte_carlo: { samples: 4000, seed: 1, distribution: "normal" }, fixed_from: "given" };
  if (fixed) body.circuit.fixed_ohm = fixed;
  const mine = ++seq;
  const problem = document.getElementById("bench-accuracy-problem");
  try {
    const view = await api("/api/view/accuracy", body);
    if (mine !== seq) return;
    problem.hidden = true;
    card.querySelectorAll("[aria-invalid]").forEach(el => el.removeAttribute("aria-invalid"));
    const text = fixed ? `With ${fmtOhm(fixed)}: ${view.summary_text}` : view.summary_text;
    document.getElementById("bench-accuracy-summary").textContent = text;
    document.getElementById("bench-accuracy-link").href = `/accuracy#inputs=${encodeURIComponent(JSON.stringify(view.inputs))}`;
  } catch (e) {
    if (mine !== seq) return;
    problem.hidden = false;
    problem.textContent = e instanceof ApiError ? e.message : `Could not reach ohmpick (${e.message}).`;
    const el = e instanceof ApiError && e.field ? field(e.field) : null;
    if (el) el.setAttribute("aria-invalid", "true");
  }
}

let lastDetail = null;
document.addEventListener("bench:result", e => { lastDetail = e.detail; refresh(lastDetail); });

if (card) {
  const again = debounce(() => {
    if (window.ohmpickBench && window.ohmpickBench.recompute) window.ohmpickBench.recompute();
    else refresh(lastDetail);
  }, 300);
  card.addEventListener("input", e => { touched.add(e.target.dataset.field); again(); });
  card.addEventListener("change", () => { showKindFields(lastDetail?.inputs?.sensor?.kind); again(); });
  const objective = document.getElementById("bench-objective");
  if (objective) objective.addEventListener("change", () => refresh(lastDetail));
  const series = document.querySelector('#bench-form [name="series"]');
  if (series && !touched.has("tolerances.fixed_pct") && SERIES_PCT[series.value] !== undefined) {
    series.addEventListener("change", () => {
      if (!touched.has("tolerances.fixed_pct") && SERIES_PCT[series.value] !== undefined) field("tolerances.fixed_pct").value = String(SERIES_PCT[series.value]);
    });
  }
  const first = window.ohmpickBench && window.ohmpickBench.last && window.ohmpickBench.last();
  if (first) { lastDetail = first; refresh(first); }
}
