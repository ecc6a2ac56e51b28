// The Firmware page: every change asks POST /api/table/view (debounced) and
// redraws; the download buttons ask POST /api/table in the chosen format and
// save the answer as a file. A bad value keeps the last good result on screen
// and marks the field the server named.
import { pageData, api, ApiError, fmt, debounce, draw, wireTwins, showProblem, clearProblems } from "./common.js";
import { parseValue as value, sensorForm } from "./sensor_form.js";
import { latestPost } from "./latest.js";

const data = pageData();
const $ = id => document.getElementById(id);
const form = $("fw-form");
const root = document.querySelector(".workspace");  // fields live in the form and the download card
const problemBox = $("fw-problem");
const results = $("fw-results");
const parts = Object.fromEntries(data.parts.map(p => [p.id, p]));
const kinds = Object.fromEntries(data.kinds.map(k => [k.kind, k]));
const sensorFields = sensorForm({ form: "fw-form", part: "fw-part", kind: "fw-kind", notes: "fw-part-notes" },
                                { kinds, parts }, { selectFirst: true });
const { partSelect, currentKind, isPotDivider } = sensorFields;
const QUANTITY = { "°C": "t (°C)", "decade": "log10(lux)", "travel": "position" };
const UNIT_TEXT = { "°C": "°C", "lx": "lux", "travel": "travel", "decade": "decades of lux" };

let last = null;  // {inputs, view} of the last good recompute
let shownKind = null;  // whose units the range and bound fields hold

const field = name => root.querySelector(`[name="${CSS.escape(name)}"]`);
const text = name => (field(name)?.value ?? "").trim();

function put(obj, key, v) { if (v !== undefined) obj[key] = v; }

export function getInputs() {
  const circuit = { supply_v: value(text("circuit.supply_v")), sensor_at: field("circuit.sensor_at").value };
  if (!isPotDivider()) put(circuit, "fixed_ohm", value(text("circuit.fixed_ohm")));
  put(circuit, "load_ohm", value(text("circuit.load_ohm")));
  put(circuit, "parallel_ohm", value(text("circuit.parallel_ohm")));
  const ratiometric = field("adc.ratiometric").value === "true";
  const adc = { bits: value(text("adc.bits")), ratiometric };
  if (!ratiometric) put(adc, "vref_v", value(text("adc.vref_v")));
  const inputs = { sensor: sensorFields.read(), circuit, adc, step: value(text("step")), table: field("table").value };
  const lo = value(text("range.min")), hi = value(text("range.max"));
  if (lo !== undefined || hi !== undefined) {
    const d = data.defaults[currentKind()].range;
    inputs.range = { min: lo === undefined ? d[0] : lo, max: hi === undefined ? d[1] : hi };
  }
  put(inputs, "error_bound", value(text("error_bound")));
  put(inputs, "poly_degree", value(text("poly_degree")));
  put(inputs, "fixed_scale", value(text("fixed_scale")));
  put(inputs, "c_name", text("c_name") || undefined);
  return inputs;
}

// Show the chosen kind's fields; a library part fills them read-only.
function syncForm() {
  const kind = sensorFields.show();
  const d = data.defaults[kind];
  if (shownKind && data.defaults[shownKind].error_unit !== d.error_unit) {
    // Values typed for another quantity mean nothing here.
    field("range.min").value = "";
    field("range.max").value = "";
    field("error_bound").value = String(d.bound);
  }
  shownKind = kind;
  const unit = UNIT_TEXT[d.unit] || d.unit;
  $("fw-range-unit-lo").textContent = `(${unit})`;
  $("fw-range-unit-hi").textContent = `(${unit})`;
  $("fw-bound-unit").textContent = `(${UNIT_TEXT[d.error_unit] || d.error_unit})`;
  field("range.min").placeholder = fmt(d.range[0], 4);
  field("range.max").placeholder = fmt(d.range[1], 4);
  field("fixed_scale").placeholder = String(d.scale);
  $("fw-scale-unit").textContent = `(per ${d.error_unit === "decade" ? "decade" : UNIT_TEXT[d.error_unit]})`;
  $("fw-range-hint").textContent = `Empty: ${fmt(d.range[0], 4)} .. ${fmt(d.range[1], 4)} ${unit}. ` +
    "A working sensor stays inside this range; codes beyond it mean a fault or an out-of-range reading.";
  const potDivider = isPotDivider();
  $("fw-fixed-box").hidden = potDivider;
  field("circuit.sensor_at").disabled = potDivider;
  field("circuit.parallel_ohm").disabled = potDivider;
  $("fw-vref-box").hidden = field("adc.ratiometric").value === "true";
}

// ---- rendering -------------------------------------------------------------

function el(tag, content, cls) {
  const e = document.createElement(tag);
  if (content instanceof Node) e.append(content); else if (content !== undefined) e.textContent = content;
  if (cls) e.className = cls;
  return e;
}
function facts(box, items) {
  box.replaceChildren(...items.filter(Boolean).map(([label, val, title]) => {
    const div = el("div");
    div.append(el("dt", label), el("dd", val));
    if (title) div.title = title;
    return div;
  }));
}
const err = (v, view) => `${fmt(v, 3)} ${view.error_unit_text}`;
function stim(v, view) {
  if (view.stimulus_unit === "lx") return `${fmt(v, 4)} lx`;
  return view.stimulus_unit === "travel" ? fmt(v, 5) : `${fmt(v, 5)} ${view.stimulus_unit}`;
}

function renderValid(view) {
  const v = view.valid_codes;
  $("fw-valid").textContent = `${v.min} … ${v.max}`;
  $("fw-valid-note").textContent = `of 0 … ${2 ** view.adc.bits - 1} · ${v.max - v.min + 1} codes over ` +
    `${stim(view.range.min, view)} … ${stim(view.range.max, view)}`;
  const rows = [[`code < ${v.min}`, v.below], [`code > ${v.max}`, v.above]];
  $("fw-faults").replaceChildren(...rows.flatMap(([k, t]) => [el("dt", k), el("dd", t)]));
  const few = view.fewest;
  facts($("fw-facts"), [
    [`Every ${view.uniform.step} codes`, `${view.uniform.entries} entries · ≤ ${err(view.uniform.max_interpolation_error, view)}`,
      "largest linear-interpolation error over every valid code"],
    few ? ["Fewest entries", `${few.entries} entries · ≤ ${err(few.max_interpolation_error, view)}`, few.method] : null,
    ["Fixed point", `${view.fixed_point.type}, ${view.fixed_point.unit}`, "how the C header stores each entry"],
    ["Firmware lookup error", `≤ ${err(view.fixed_point.max_error, view)}`,
      "the exported table through the integer lookup, against the exact value, at every valid code"],
    ["LSB", `${fmt(view.adc.lsb_v * 1e3, 4)} mV`],
  ]);
}

function renderRows(view) {
  const unit = view.stimulus_unit === "travel" ? "travel" : view.stimulus_unit;
  const head = el("tr");
  ["Code", "Centre (V)", `Stimulus (${unit})`, `Stored (1/${view.fixed_point.scale})`, "Firmware value"].forEach(h => head.append(el("th", h)));
  const body = el("tbody");
  view.rows.forEach(r => {
    const tr = el("tr");
    [String(r.code), fmt(r.centre_v, 5), fmt(r.stimulus, 6), String(r.stored), fmt(r.firmware, 6)].forEach(c => tr.append(el("td", c)));
    body.append(tr);
  });
  const thead = el("thead"); thead.append(head);
  $("fw-rows").replaceChildren(thead, body);
  const layout = view.layout === "fewest" ? `fewest entries for ${err(view.fewest.error_bound, view)}` : `every ${view.step} codes`;
  $("fw-rows-note").textContent = `${view.entries} entries (${layout})` +
    (view.rows_shown < view.entries ? `; the first ${view.rows_shown} are shown, the downloads hold all.` : ".");
}

function renderFormulas(view) {
  const poly = view.polynomial, sh = view.steinhart_hart;
  const polyBox = $("fw-poly"), shBox = $("fw-sh");
  if (poly) {
    const terms = poly.coefficients.map((c, i) => {
      const mag = `${Math.abs(c).toPrecision(10)}${i ? ` · x^${i}` : ""}`;
      return i === 0 ? `${c < 0 ? "−" : ""}${mag}` : `\n  ${c < 0 ? "−" : "+"} ${mag}`;
    }).join("");
    polyBox.replaceChildren(
      el("h3", `Polynomial, degree ${poly.degree}`),
      el("p", `Least squares over every valid code; largest error ${err(poly.max_error, view)} (at code ${poly.worst_code}).` +
        ` With x = (code − ${poly.mid}) / ${poly.half}, which runs −1 … 1:`),
      el("pre", `${QUANTITY[view.error_unit] || "value"} = ${terms}`, "fw-code"));
  } else {
    polyBox.replaceChildren(el("p", "Give a polynomial degree to fit one.", "muted"));
  }
  $("fw-poly-panel").hidden = !poly;
  if (sh) {
    shBox.replaceChildren(
      el("h3", "Steinhart–Hart"),
      el("p", `${sh.note}. Through the code's resistance it reproduces the table within ${fmt(sh.max_error, 2)} °C.`),
      el("pre", `1/T = a + b·ln R + c·(ln R)³   (T in K, R in Ω)\na = ${sh.a.toPrecision(12)}\nb = ${sh.b.toPrecision(12)}\n` +
        `c = ${sh.c.toPrecision(12)}\n\nR from the code:\n  ${sh.ohm_of_code.replace(/; /g, "\n  ")}`, "fw-code"));
  } else {
    shBox.replaceChildren();
  }
}

function renderWarnings(view) {
  $("fw-warnings").replaceChildren(...view.warnings.map(w => {
    const div = el("div", w, "notice warn");
    div.setAttribute("role", "status");
    return div;
  }));
}

export function render(view) {
  renderWarnings(view);
  renderValid(view);
  renderRows(view);
  renderFormulas(view);
  draw($("fw-curve"), view.figures.curve);
  draw($("fw-error"), view.figures.error);
  if (view.figures.poly) draw($("fw-poly-plot"), view.figures.poly);
  field("c_name").placeholder = view.c_name;
}

// ---- recomputing and downloading -----------------------------------------

export const recompute = latestPost("/api/table/view", getInputs, results, {
  done(inputs, view) {
    clearProblems(root, problemBox);
    render(view);
    last = { inputs, view };
  },
  failed(problem) { showProblem(problemBox, problem, root); },
});

function save(name, type, body) {
  const url = URL.createObjectURL(new Blob([body], { type }));
  const a = Object.assign(document.createElement("a"), { href: url, download: name });
  document.body.appendChild(a); a.click(); a.remove();
  setTimeout(() => URL.revokeObjectURL(url), 1000);
}

const FILES = { c: [".h", "text/x-c"], csv: [".csv", "text/csv"], json: [".json", "application/json"] };

async function download(format) {
  const inputs = { ...getInputs(), format };
  const note = $("fw-dl-note");
  note.textContent = "";
  try {
    const body = await api("/api/table", inputs);
    const [suffix, type] = FILES[format];
    const stem = inputs.c_name || (last && last.view.c_name) || "table";
    save(stem + suffix, type, format === "json" ? JSON.stringify(body, null, 1) : body);
    note.textContent = `saved ${stem}${suffix}`;
  } catch (e) {
    showProblem(problemBox, e instanceof ApiError ? e : { message: `Download failed (${e.message}).`, field: "" }, root);
  }
}

const later = debounce(recompute, 250);
root.addEventListener("input", e => { if (e.target.matches("input")) later(); });
root.addEventListener("change", e => {
  if (e.target.matches("select")) { syncForm(); recompute(); }
});
form.addEventListener("submit", e => { e.preventDefault(); recompute(); });
document.querySelectorAll("[data-format]").forEach(b => b.addEventListener("click", () => download(b.dataset.format)));

// Start: the form shows the opening design; its view came with the page.
if (data.inputs.sensor.part) partSelect.value = data.inputs.sensor.part;
syncForm();
wireTwins(document);
render(data.view);
last = { inputs: getInputs(), view: data.view };
window.ohmpickFirmware = { getInputs, recompute, last: () => last };
