// Parts shelf: browse parts and their curves, add a part from parameters,
// fit a part to a CSV table and keep it. Data: GET /api/view/shelf.
import { api, pageData, draw, wireTwins, fmt, fmtOhm, showProblem, clearProblems } from "./common.js";

let data = pageData();
let selected = data.selected || "";
const $ = id => document.getElementById(id);

const KIND_NAMES = { ntc_beta: "NTC, beta", ntc_sh: "NTC, Steinhart–Hart", rtd: "Platinum RTD", ldr: "LDR", pot: "Potentiometer" };
const QUANTITY_OF = { ntc_beta: "temperature", ntc_sh: "temperature", rtd: "temperature", ldr: "illuminance", pot: "position" };
// Labels and hints of the parameters, by "kind.name" or plain "name".
const PARAMS = {
  r_nominal_ohm: ["Nominal resistance (Ω)", "e.g. 10k, 4k7"], beta_k: ["B value (K)", "e.g. 3950"],
  t_nominal_c: ["Nominal temperature (°C)", "where R is nominal"],
  "ntc_sh.a": ["a (1/K)", "1/T = a + b·ln R + c·(ln R)³"], "ntc_sh.b": ["b (1/K)", ""], "ntc_sh.c": ["c (1/K)", ""],
  r0_ohm: ["R0 at 0 °C (Ω)", "100 for Pt100"], "rtd.a": ["A (1/°C)", "IEC 60751"], "rtd.b": ["B (1/°C²)", "IEC 60751"],
  "rtd.c": ["C (1/°C⁴)", "below 0 °C only"],
  r_ref_ohm: ["Resistance at the reference light (Ω)", "e.g. 20k"], gamma: ["γ (slope)", "typ. 0.5 … 1.0"],
  lux_ref: ["Reference light (lux)", ""], r_dark_ohm: ["Dark resistance (Ω)", "optional, in parallel"],
  r_total_ohm: ["Track resistance (Ω)", "end to end"], taper: ["Taper", ""], wiring: ["Wiring", ""],
  mid_fraction: ["Fraction at mid-travel", "log taper, typ. 0.1"],
};
const CHOICES = { taper: ["linear", "log"], wiring: ["divider", "rheostat"] };
const TOLERANCES = {
  sensor_pct: "Resistance tolerance (±%)", beta_pct: "B value tolerance (±%)",
  gamma_pct: "γ tolerance (±%)", r0_pct: "R0 tolerance (±%)",
};
const TOLERANCES_OF = { ntc_beta: ["sensor_pct", "beta_pct"], ntc_sh: ["sensor_pct"], rtd: ["sensor_pct", "r0_pct"],
  ldr: ["sensor_pct", "gamma_pct"], pot: ["sensor_pct"] };
const SELF_HEATING = new Set(["ntc_beta", "ntc_sh", "rtd"]);

function el(tag, attrs = {}, ...children) {
  const node = document.createElement(tag);
  for (const [k, v] of Object.entries(attrs)) {
    if (v === null || v === undefined || v === false) continue;
    if (k === "text") node.textContent = v; else node.setAttribute(k, v === true ? "" : v);
  }
  node.append(...children);
  return node;
}

function paramLabel(kind, name) { return PARAMS[`${kind}.${name}`] || PARAMS[name] || [name, ""]; }
function showValue(name, v) {
  if (v === null || v === undefined) return "none";
  if (typeof v === "string") return v;
  return name.endsWith("_ohm") ? fmtOhm(v, 4) : fmt(v, 6);
}
// A sensor's parameters in the kind's own order (page data arrives with sorted keys).
function ordered(kind, sensor) {
  const spec = data.kinds[kind];
  return spec.fields.filter(k => k in sensor).map(k => [k, sensor[k]]);
}
function unitOf(kind) { return kind === "ldr" ? "lux" : kind === "pot" ? "of travel" : "°C"; }

// --- the list and the detail --------------------------------------------------
function visible() {
  const kind = $("kind-filter").value, text = $("find").value.trim().toLowerCase();
  return data.parts.filter(p => (!kind || p.kind === kind) &&
    (!text || p.name.toLowerCase().includes(text) || p.id.includes(text)));
}

function renderList() {
  const rows = $("part-rows");
  rows.replaceChildren();
  const shown = visible();
  for (const p of shown) {
    const pick = el("a", { href: `/shelf?part=${encodeURIComponent(p.id)}`, "data-part": p.id,
      "aria-current": p.id === selected ? "true" : null, text: p.name });
    pick.addEventListener("click", ev => { ev.preventDefault(); select(p.id); });
    const mine = p.origin === "user" ? el("span", { class: "muted", text: " (yours)" }) : "";
    const tr = el("tr", { class: p.id === selected ? "picked" : null },
      el("td", {}, pick, mine), el("td", { text: KIND_NAMES[p.kind] || p.kind }));
    rows.append(tr);
  }
  const mine = data.parts.filter(p => p.origin === "user").length;
  $("part-count").textContent = `${shown.length} of ${data.parts.length} parts shown; ${mine} of them yours.`;
}

function facts(box, pairs) {
  box.replaceChildren(...pairs.map(([k, v]) => el("div", {}, el("dt", { text: k }), el("dd", { text: v }))));
}

function select(id) {
  const part = data.parts.find(p => p.id === id) || data.parts[0];
  if (!part) return;
  selected = part.id;
  history.replaceState(null, "", `/shelf?part=${encodeURIComponent(part.id)}`);
  renderList();
  $("detail-error").hidden = true;
  $("detail-name").textContent = part.name;
  $("detail-notes").textContent = `${part.notes} (id ${part.id}, ${part.origin === "user" ? "your part" : "library file"})`;
  const params = ordered(part.kind, part.sensor).map(([k, v]) => [paramLabel(part.kind, k)[0], showValue(k, v)]);
  facts($("detail-params"), [["Kind", KIND_NAMES[part.kind]], ...params]);
  const tol = part.tolerances || {};
  const extra = Object.keys(TOLERANCES).filter(k => k in tol).map(k => [TOLERANCES[k], `± ${fmt(tol[k], 4)} %`]);
  if (part.dissipation_w_per_k) extra.push(["Dissipation constant", `${fmt(part.dissipation_w_per_k * 1000, 4)} mW/K`]);
  if (!extra.length) extra.push(["Tolerances", "none given"]);
  facts($("detail-extra"), extra);
  const fitted = $("detail-fitted");
  fitted.hidden = !part.fitted;
  if (part.fitted) {
    fitted.textContent = `Fitted to a table over ${fmt(part.fitted.min)} … ${fmt(part.fitted.max)} ${unitOf(part.kind)}. ` +
      "Designs that use it beyond that range are extrapolated, and their pages say by how much.";
  }
  const toml = $("export-toml");
  toml.href = `/api/parts/${encodeURIComponent(part.id)}/toml`;
  toml.setAttribute("download", `${part.id}.toml`);
  const kin = data.parts.filter(p => p.id !== part.id && QUANTITY_OF[p.kind] === QUANTITY_OF[part.kind]).slice(0, 2);
  $("compare-link").href = `/compare?parts=${[part.id, ...kin.map(p => p.id)].map(encodeURIComponent).join(",")}`;
  const del = $("delete-part");
  del.hidden = part.origin !== "user";
  del.dataset.armed = "";
  del.textContent = "Delete this part";
  $("curve-plot-title").textContent = `Resistance curve: ${part.name}`;
  draw($("curve-plot"), part.figure);
}

async function refresh(pick) {
  data = Object.assign(await api("/api/view/shelf"), { selected: pick });
  if (pick) selected = pick;
  renderList();
  select(selected);
}

$("delete-part").addEventListener("click", async ev => {
  const btn = ev.currentTarget;
  if (!btn.dataset.armed) {  // two presses, so a slip of the finger deletes nothing
    btn.dataset.armed = "1";
    btn.textContent = "Press again to delete";
    return;
  }
  try {
    await api(`/api/parts/${encodeURIComponent(selected)}`, undefined, "DELETE");
    await refresh(data.parts.find(p => p.id !== selected)?.id || "");
  } catch (err) {
    showProblem($("detail-error"), err);
  }
});
$("kind-filter").addEventListener("change", renderList);
$("find").addEventListener("input", renderList);

// --- forms ----------------------------------------------------------------
function input(name, field, label, hint, attrs = {}) {
  const box = el("input", { name, "data-field": field, autocomplete: "off", ...attrs });
  return el("label", {}, label, box, hint ? el("span", { class: "hint", text: hint }) : "", el("span", { class: "field-error" }));
}

function buildParams(kind) {
  const spec = data.kinds[kind];
  const box = $("create-params");
  box.replaceChildren();
  for (const name of spec.fields) {
    const [label, hint] = paramLabel(kind, name);
    const optional = name in spec.optional;
    if (CHOICES[name]) {
      const sel = el("select", { name: `sensor.${name}`, "data-field": `sensor.${name}` },
        ...CHOICES[name].map(c => el("option", { value: c, selected: c === spec.optional[name], text: c })));
      box.append(el("label", {}, label, sel, el("span", { class: "field-error" })));
      continue;
    }
    const dflt = optional && spec.optional[name] !== null ? String(spec.optional[name]) : "";
    const attrs = { inputmode: name.endsWith("_ohm") ? "text" : "decimal",
      placeholder: optional ? (dflt ? `default ${dflt}` : "none") : "required" };
    box.append(input(`sensor.${name}`, `sensor.${name}`, label, hint, attrs));
  }
  buildExtra($("create-extra"), kind);
}

function buildExtra(box, kind) {
  box.replaceChildren();
  for (const key of TOLERANCES_OF[kind]) {
    box.append(input(`tolerances.${key}`, `tolerances.${key}`, TOLERANCES[key], "", { inputmode: "decimal", placeholder: "none" }));
  }
  if (SELF_HEATING.has(kind)) {
    box.append(input("dissipation_mw_per_k", "dissipation_w_per_k", "Dissipation constant (mW/K)",
      "self-heating; bead in still air ≈ 1–2", { inputmode: "decimal", placeholder: "none" }));
  }
}

function number(text) {
  const t = text.trim();
  return t === "" || isNaN(Number(t)) ? t : Number(t);
}

// The tolerances and dissipation fields of a form, in the API's units (W/K).
function extras(form) {
  const out = { tolerances: {} };
  for (const box of form.querySelectorAll("[name^='tolerances.']")) {
    if (box.value.trim() !== "") out.tolerances[box.name.slice(11)] = number(box.value);
  }
  const diss = form.querySelector("[name='dissipation_mw_per_k']");
  if (diss && diss.value.trim() !== "") {
    const v = number(diss.value);
    out.dissipation_w_per_k = typeof v === "number" ? v / 1000 : v;
  }
  return out;
}

$("create-kind").addEventListener("change", ev => buildParams(ev.target.value));
$("create-form").addEventListener("submit", async ev => {
  ev.preventDefault();
  const form = ev.currentTarget, box = $("create-problem");
  clearProblems(form, box);
  const kind = $("create-kind").value;
  const sensor = { kind };
  for (const field of form.querySelectorAll("[name^='sensor.']")) {
    const name = field.name.slice(7), text = field.value.trim();
    if (text === "") continue;
    sensor[name] = name.endsWith("_ohm") || CHOICES[name] ? text : number(text);
  }
  const body = { name: form.elements.name.value, sensor, ...extras(form) };
  if (form.elements.notes.value.trim()) body.notes = form.elements.notes.value;
  try {
    const part = await api("/api/parts", body);
    form.reset();
    buildParams($("create-kind").value);
    await refresh(part.id);
    $("part-detail").scrollIntoView({ block: "start" });
  } catch (err) {
    showProblem(box, err, form);
  }
});

// --- table import ---------------------------------------------------------
let lastFit = null;
$("import-file").addEventListener("change", async ev => {
  const file = ev.target.files[0], box = $("import-problem");
  clearProblems($("import-form"), box);
  if (!file) return;
  if (file.size > data.max_table_bytes) {
    showProblem(box, { message: `csv: ${file.name} is ${file.size.toLocaleString()} bytes; at most ${data.max_table_bytes.toLocaleString()} bytes (1 MB) are accepted`, field: "csv" }, $("import-form"));
    return;
  }
  $("import-csv").value = await file.text();
});

$("import-form").addEventListener("submit", async ev => {
  ev.preventDefault();
  const form = ev.currentTarget, box = $("import-problem");
  clearProblems(form, box);
  const body = { csv: $("import-csv").value, model: $("import-model").value };
  try {
    lastFit = { request: body, result: await api("/api/parts/import", body) };
    showFit(lastFit.result);
  } catch (err) {
    $("import-result").hidden = true;
    showProblem(box, err.status === 413 ? { message: "csv: the table is over the 1 MB limit", field: "csv" } : err, form);
  }
});

function showFit(fit) {
  $("import-result").hidden = false;
  const unit = fit.residual_unit === "decade" ? "decades of lux" : "°C";
  $("fit-error").textContent = `largest error ${fmt(fit.max_abs_error, 3)} ${unit}`;
  $("fit-summary").textContent = `${fit.rows} rows over ${fmt(fit.fitted.min)} … ${fmt(fit.fitted.max)} ${fit.unit}; ` +
    `worst resistance misfit ${fmt(fit.max_ohm_error_pct, 3)} %`;
  const kind = fit.sensor.kind;
  facts($("fit-params"), [["Model", data.models[fit.model]],
    ...ordered(kind, fit.sensor).map(([k, v]) => [paramLabel(kind, k)[0], showValue(k, v)])]);
  draw($("fit-plot"), fit.figures.fit);
  draw($("residual-plot"), fit.figures.residuals);
  buildExtra($("save-extra"), kind);
  $("import-result").scrollIntoView({ block: "start" });
}

$("save-form").addEventListener("submit", async ev => {
  ev.preventDefault();
  const form = ev.currentTarget, box = $("save-problem");
  clearProblems(form, box);
  if (!lastFit) return;
  const body = { ...lastFit.request, save: true, name: form.elements.name.value, ...extras(form) };
  if (form.elements.notes.value.trim()) body.notes = form.elements.notes.value;
  try {
    const out = await api("/api/parts/import", body);
    form.reset();
    $("import-result").hidden = true;
    await refresh(out.part.id);
    $("part-detail").scrollIntoView({ block: "start" });
  } catch (err) {
    showProblem(box, err, form);
  }
});

// --- start -----------------------------------------------------------------
if (data.problems && data.problems.length) {
  const box = $("library-problems");
  box.hidden = false;
  box.replaceChildren(el("strong", { text: "Some part files did not load: " }), ...data.problems.map(p => el("div", { text: p })));
}
buildParams($("create-kind").value);
wireTwins(document);
renderList();
select(selected);
