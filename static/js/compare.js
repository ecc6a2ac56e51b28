// Compare page: 2 to 6 parts in one divider; overlaid plots, a sortable
// metrics table, and sharing as a saved design (inputs.view = "compare").
import { api, pageData, draw, wireTwins, fmt, fmtOhm, debounce, showProblem, clearProblems } from "./common.js";

const data = pageData();
const $ = id => document.getElementById(id);
const form = $("compare-form");
const UNIT = { temperature: "°C", illuminance: "lux", position: "travel" };
const GROUP = { temperature: "Temperature", illuminance: "Light", position: "Potentiometers" };
const QUANTITY_OF = Object.fromEntries(data.parts.map(p => [p.id, p.quantity]));
let quantity = null;
let view = null;
let sort = { key: null, dir: 1 };

function el(tag, attrs = {}, ...children) {
  const node = document.createElement(tag);
  for (const [k, v] of Object.entries(attrs)) {
    if (v === null || v === undefined || v === false) continue;
    if (k === "text") node.textContent = v; else node.setAttribute(k, v === true ? "" : v);
  }
  node.append(...children);
  return node;
}

// --- parts rows -----------------------------------------------------------
function partSelect(index, value) {
  const groups = {};
  for (const p of data.parts) (groups[p.quantity] ||= []).push(p);
  const sel = el("select", { "aria-label": `Part ${index + 1}`, "data-field": `sensors.${index}`, style: "flex:1 1 auto;min-width:0" },
    ...Object.entries(groups).map(([q, parts]) => el("optgroup", { label: GROUP[q] || q },
      ...parts.map(p => el("option", { value: p.id, selected: p.id === value, text: p.origin === "user" ? `${p.name} (yours)` : p.name })))));
  if (value && !QUANTITY_OF[value]) sel.append(el("option", { value, selected: true, text: `${value} (not in the library)` }));
  sel.addEventListener("change", () => { adoptQuantity(); run(); });
  return sel;
}

function setSensors(ids) {
  const box = $("sensor-rows");
  box.replaceChildren();
  ids.forEach((id, i) => {
    const remove = el("button", { type: "button", class: "quiet", "aria-label": `Remove part ${i + 1}`, text: "Remove" });
    remove.disabled = ids.length <= 2;
    remove.addEventListener("click", () => { setSensors(chosen().filter((_, j) => j !== i)); run(); });
    box.append(el("div", { class: "row", style: "flex-wrap:nowrap" },
      el("span", { class: "muted num", text: `${i + 1}.` }), partSelect(i, id), remove));
  });
  $("add-sensor").disabled = ids.length >= data.max_sensors;
}

function chosen() { return [...$("sensor-rows").querySelectorAll("select")].map(s => s.value); }

$("add-sensor").addEventListener("click", () => {
  const ids = chosen();
  const q = QUANTITY_OF[ids[0]];
  const next = data.parts.find(p => p.quantity === q && !ids.includes(p.id)) || data.parts.find(p => p.quantity === q);
  if (next) { setSensors([...ids, next.id]); run(); }
});

// A new stimulus quantity in the first row brings that quantity's default range.
function adoptQuantity() {
  const q = QUANTITY_OF[chosen()[0]] || quantity || "temperature";
  if (quantity && q !== quantity) {
    const [lo, hi] = data.default_range[q];
    form.elements["range.min"].value = lo;
    form.elements["range.max"].value = hi;
  }
  quantity = q;
  document.querySelectorAll(".range-unit").forEach(s => { s.textContent = UNIT[q]; });
  $("caution-box").hidden = q === "temperature";
}

// --- form <-> inputs -----------------------------------------------------------
function setForm(inputs) {
  setSensors(inputs.sensors.map(s => s.part || ""));
  const c = inputs.circuit || {}, adc = inputs.adc || {};
  const set = (name, v) => { form.elements[name].value = v === undefined || v === null ? "" : v; };
  set("range.min", inputs.range.min); set("range.max", inputs.range.max);
  set("circuit.supply_v", c.supply_v); set("circuit.sensor_at", c.sensor_at || "bottom");
  set("circuit.load_ohm", c.load_ohm); set("circuit.fixed_ohm", c.fixed_ohm);
  form.querySelector(`[name=mode][value=${c.fixed_ohm ? "shared" : "own"}]`).checked = true;
  set("objective", inputs.objective || "swing"); set("series", inputs.series || "E24");
  set("adc.bits", adc.bits ?? 12); set("adc.vref_v", adc.ratiometric === false ? adc.vref_v : "");
  form.elements["adc.ratiometric"].checked = adc.ratiometric !== false;
  quantity = null;
  adoptQuantity();
  modeChanged();
}

function num(name) {
  const t = form.elements[name].value.trim();
  return t === "" ? null : (isNaN(Number(t)) ? t : Number(t));
}

function inputs() {
  const shared = form.querySelector("[name=mode]:checked").value === "shared";
  const circuit = { supply_v: num("circuit.supply_v"), sensor_at: form.elements["circuit.sensor_at"].value };
  const load = form.elements["circuit.load_ohm"].value.trim();
  if (load) circuit.load_ohm = load;
  if (shared) circuit.fixed_ohm = form.elements["circuit.fixed_ohm"].value.trim() || null;
  const ratiometric = form.elements["adc.ratiometric"].checked;
  const adc = { bits: num("adc.bits"), ratiometric };
  if (!ratiometric) adc.vref_v = num("adc.vref_v");
  return {
    sensors: chosen().map(part => ({ part })), circuit,
    range: { min: num("range.min"), max: num("range.max") },
    objective: form.elements.objective.value, series: form.elements.series.value, adc,
  };
}

function modeChanged() {
  const shared = form.querySelector("[name=mode]:checked").value === "shared";
  $("shared-box").hidden = !shared;
  form.elements.series.disabled = shared;
  const ratiometric = form.elements["adc.ratiometric"].checked;
  form.elements["adc.vref_v"].disabled = ratiometric;
}

// --- results ---------------------------------------------------------------
const SCORE_UNIT = { swing: "V", linearity: "%" };
function columns(v) {
  const slope = v.slope_unit, res = v.resolution_unit;
  return [
    { key: "label", title: "Part", value: r => r.label, show: r => r.label },
    { key: "fixed", title: v.shared_fixed ? "Fixed resistor (shared)" : "Fixed resistor", value: r => r.fixed_ohm, show: r => fmtOhm(r.fixed_ohm) },
    { key: "score", title: `Score (${SCORE_UNIT[v.objective] || slope})`, value: r => r.score, show: r => fmt(r.score, 4) },
    { key: "swing", title: "Swing (V)", value: r => r.metrics.swing_v, show: r => fmt(r.metrics.swing_v, 4) },
    { key: "nonlinearity", title: "Nonlinearity (%)", value: r => r.metrics.nonlinearity_pct, show: r => fmt(r.metrics.nonlinearity_pct, 3) },
    { key: "sensitivity", title: `Worst sensitivity (${slope})`, value: r => r.metrics.min_sensitivity, show: r => fmt(r.metrics.min_sensitivity, 4) },
    { key: "resolution", title: `Worst resolution (${res})`, value: r => r.worst_resolution, show: r => fmt(r.worst_resolution, 3) },
    { key: "power", title: "Max sensor power (mW)", value: r => r.metrics.max_sensor_power_w, show: r => fmt(r.metrics.max_sensor_power_w * 1000, 3) },
  ];
}

function compareBy(col, dir) {
  return (a, b) => {
    const x = col.value(a), y = col.value(b);
    if (x === null || x === undefined) return 1;  // blanks last either way
    if (y === null || y === undefined) return -1;
    return (typeof x === "string" ? x.localeCompare(y) : x - y) * dir;
  };
}

function renderTable() {
  const cols = columns(view);
  $("metrics-head").replaceChildren(...cols.map(col => {
    const active = sort.key === col.key;
    const arrow = active ? (sort.dir > 0 ? " ▲" : " ▼") : "";
    const btn = el("button", { type: "button", class: "sort", "data-sort": col.key,
      title: `Sort by ${col.title.toLowerCase()}` }, col.title, el("span", { "aria-hidden": "true", text: arrow }));
    btn.addEventListener("click", () => {
      sort = { key: col.key, dir: active ? -sort.dir : 1 };
      renderTable();
      $("metrics-head").querySelector(`[data-sort="${col.key}"]`).focus();
    });
    return el("th", { scope: "col", "aria-sort": active ? (sort.dir > 0 ? "ascending" : "descending") : "none" }, btn);
  }));
  const rows = view.rows.map((r, i) => ({ ...r, order: i }));
  const col = cols.find(c => c.key === sort.key);
  if (col) rows.sort(compareBy(col, sort.dir));
  $("metrics-rows").replaceChildren(...rows.map(r => el("tr", { "data-row": r.order },
    ...cols.map((c, j) => el("td", { class: j ? "num" : null, style: j ? "white-space:nowrap" : "min-width:11em", text: c.show(r) })))));
  $("metrics-note").textContent = view.shared_fixed
    ? "Every part on the one shared resistor; scores are what that resistor gives."
    : `Each part with its own best ${view.series} resistor for the objective.`;
}

function render(v) {
  view = v;
  const warn = $("warnings");
  warn.hidden = !v.warnings.length;
  warn.replaceChildren(...v.warnings.map(w => el("div", { text: w })));
  renderTable();
  draw($("output-plot"), v.figures.output);
  draw($("slope-plot"), v.figures.sensitivity);
  draw($("resolution-plot"), v.figures.resolution);
  $("resolution-plot-title").textContent = `Resolution per LSB (${v.adc.bits}-bit, ${fmt(v.lsb_v * 1000, 3)} mV per LSB)`;
}

const run = debounce(async () => {
  const box = $("problem");
  clearProblems(form, box);
  $("sensors-error").textContent = "";
  const body = inputs();
  if (form.querySelector("[name=mode]:checked").value === "shared" && !body.circuit.fixed_ohm) {
    showProblem(box, { field: "circuit.fixed_ohm", message: "circuit.fixed_ohm: enter the resistor all parts share" }, form);
    return;
  }
  try {
    render(await api("/api/view/compare", body));
    document.body.dataset.ready = "1";
  } catch (err) {
    showProblem(box, err, form);
    if (err.field && err.field.startsWith("sensors")) $("sensors-error").textContent = err.message;
  }
}, 250);

form.addEventListener("input", ev => { if (ev.target.tagName !== "SELECT") run(); });
form.addEventListener("change", ev => { modeChanged(); if (ev.target.tagName === "SELECT" || ev.target.type !== "text") run(); });
form.addEventListener("submit", ev => { ev.preventDefault(); run(); });

// --- sharing ----------------------------------------------------------------
$("share-form").addEventListener("submit", async ev => {
  ev.preventDefault();
  const share = ev.currentTarget, box = $("share-problem"), out = $("share-result");
  clearProblems(share, box);
  out.hidden = true;
  const name = share.elements.name.value.trim() || `Comparison of ${chosen().length} parts`;
  try {
    const saved = await api("/api/designs", { name, view: "compare", ...inputs() });
    const link = new URL(saved.url, location.origin).href;
    out.replaceChildren("Saved. Anyone on your network can open ", el("a", { href: link, text: link }),
      el("br"), el("span", { class: "hint", text: `Owner token (keep it to change or delete the design): ${saved.owner_token}` }));
    out.hidden = false;
  } catch (err) {
    showProblem(box, err, share);
  }
});

// --- start --------------------------------------------------------------------
wireTwins(document);
setForm(data.inputs);
if (data.copy) {
  api(`/api/designs/${encodeURIComponent(data.copy)}`).then(design => {
    if (design.view !== "compare") throw new Error(`design ${design.id} was saved by another page (${design.view}); open it from the saved designs list`);
    setForm(design.inputs);
    $("share-form").elements.name.value = design.name;
    run();
  }).catch(err => showProblem($("problem"), err, form));
} else if (data.view) {
  render(data.view);
  document.body.dataset.ready = "1";
} else if (data.error) {
  showProblem($("problem"), data.error, form);
}
