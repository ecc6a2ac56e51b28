// Shared page helpers: JSON calls with the app's error shape, plots with
// their CSV/JSON/PNG/SVG twins, number formatting. No inline script: pages
// read their start-up data from <script type="application/json"> blocks.

export function pageData(id = "page-data") {
  const el = document.getElementById(id);
  return el ? JSON.parse(el.textContent) : {};
}

export class ApiError extends Error {
  constructor(status, body) {
    const e = (body && body.error) || {};
    super(e.message || `request failed (${status})`);
    this.status = status;
    this.field = e.field || "";
    this.problems = e.problems || [];
  }
}

export async function api(path, body, method = body === undefined ? "GET" : "POST") {
  const opts = { method, headers: { "Accept": "application/json" } };
  if (body !== undefined) {
    opts.headers["Content-Type"] = "application/json";
    opts.body = JSON.stringify(body);
  }
  const res = await fetch(path, opts);
  const type = res.headers.get("content-type") || "";
  const data = type.includes("json") ? await res.json() : await res.text();
  if (!res.ok) throw new ApiError(res.status, data);
  return data;
}

const PREFIX = [[1e9, "G"], [1e6, "M"], [1e3, "k"], [1, ""], [1e-3, "m"]];
export function fmtOhm(v, digits = 3) {
  if (v === null || v === undefined || !isFinite(v)) return "—";
  if (v === 0) return "0 Ω";
  for (const [scale, p] of PREFIX) {
    if (Math.abs(v) >= scale * 0.9995) return `${trim((v / scale).toPrecision(digits))} ${p}Ω`;
  }
  return `${trim((v / 1e-3).toPrecision(digits))} mΩ`;
}
export function fmt(v, digits = 4, unit = "") {
  if (v === null || v === undefined || !isFinite(v)) return "—";
  const text = Math.abs(v) >= 1e5 || (Math.abs(v) < 1e-3 && v !== 0) ? v.toExponential(digits - 1) : trim(v.toPrecision(digits));
  return unit ? `${text} ${unit}` : text;
}
// A value with an SI prefix on its unit: fmtSI(0.000486, "V") -> "486 µV",
// fmtSI(0.0106, "V/°C") -> "10.6 mV/°C". Units that take no prefix (%) pass to fmt.
const SI_STEPS = [[1e9, "G"], [1e6, "M"], [1e3, "k"], [1, ""], [1e-3, "m"], [1e-6, "µ"], [1e-9, "n"]];
export function fmtSI(v, unit, digits = 4) {
  if (v === null || v === undefined || !isFinite(v)) return "—";
  if (!/^(V|W|A|Ω|F|Hz|s)(\/|$)/.test(unit)) return fmt(v, digits, unit);
  if (v === 0) return `0 ${unit}`;
  const a = Math.abs(v);
  for (const [scale, p] of SI_STEPS) {
    if (a >= scale * 0.99995) return `${trim((v / scale).toPrecision(digits))} ${p}${unit}`;
  }
  return `${trim((v / 1e-12).toPrecision(digits))} p${unit}`;
}
function trim(s) { return s.includes("e") ? s : s.replace(/(\.\d*?)0+$/, "$1").replace(/\.$/, ""); }

export function debounce(fn, ms = 200) {
  let t;
  return (...args) => { clearTimeout(t); t = setTimeout(() => fn(...args), ms); };
}

// Draw a plotly figure (dict with data and layout) and keep it on the element
// so the twins export exactly what is shown.
export function draw(el, fig) {
  const layout = Object.assign({ margin: { l: 64, r: 16, t: 36, b: 52 }, autosize: true }, fig.layout || {});
  el._fig = fig;
  return window.Plotly.react(el, fig.data, layout, { responsive: true, displaylogo: false });
}

function save(name, type, text) {
  const url = URL.createObjectURL(new Blob([text], { type }));
  const a = Object.assign(document.createElement("a"), { href: url, download: name });
  document.body.appendChild(a); a.click(); a.remove();
  setTimeout(() => URL.revokeObjectURL(url), 1000);
}

export function figureCsv(fig) {
  const xTitle = (((fig.layout || {}).xaxis || {}).title || {}).text || "x";
  const yTitle = (((fig.layout || {}).yaxis || {}).title || {}).text || "y";
  const rows = [["trace", xTitle, yTitle]];
  for (const tr of fig.data) {
    const xs = tr.x || [], ys = tr.y || [];
    for (let i = 0; i < ys.length; i++) rows.push([tr.name || "", xs[i], ys[i]]);
  }
  return rows.map(r => r.map(c => {
    const s = c === null || c === undefined ? "" : String(c);
    return /[",\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
  }).join(",")).join("\n") + "\n";
}

export function figureJson(fig) {
  return JSON.stringify({ layout: { title: fig.layout && fig.layout.title, xaxis: fig.layout && fig.layout.xaxis && fig.layout.xaxis.title, yaxis: fig.layout && fig.layout.yaxis && fig.layout.yaxis.title },
    traces: fig.data.map(t => ({ name: t.name, x: t.x, y: t.y })) }, null, 1);
}

// Wire the twin buttons of every .plot-panel under root (data-name gives the file stem).
export function wireTwins(root = document) {
  root.querySelectorAll(".plot-panel").forEach(panel => {
    if (panel._wired) return;
    panel._wired = true;
    const plot = panel.querySelector(".plot");
    const stem = panel.dataset.name || "plot";
    panel.querySelectorAll("[data-twin]").forEach(btn => btn.addEventListener("click", () => {
      const fig = plot._fig;
      if (!fig) return;
      const kind = btn.dataset.twin;
      if (kind === "csv") save(`${stem}.csv`, "text/csv", figureCsv(fig));
      else if (kind === "json") save(`${stem}.json`, "application/json", figureJson(fig));
      else window.Plotly.downloadImage(plot, { format: kind, filename: stem, width: 1100, height: 520 });
    }));
  });
}

// Inline messages: the field named by the server gets aria-invalid and a note.
export function showProblem(box, err, form) {
  clearProblems(form);
  box.hidden = false;
  box.textContent = err.message;
  if (form && err.field) {
    // Kinds may share a parameter name: the enabled (shown) input is the one meant.
    const all = [...form.querySelectorAll(`[data-field="${CSS.escape(err.field)}"]`)];
    const input = all.find(el => !el.disabled) || all[0];
    if (input) {
      input.setAttribute("aria-invalid", "true");
      const note = input.closest("label")?.querySelector(".field-error");
      if (note) note.textContent = err.message.replace(/^[^:]*:\s*/, "");
    }
  }
}
export function clearProblems(form, box) {
  if (box) { box.hidden = true; box.textContent = ""; }
  if (!form) return;
  form.querySelectorAll("[aria-invalid]").forEach(el => el.removeAttribute("aria-invalid"));
  form.querySelectorAll(".field-error").forEach(el => { el.textContent = ""; });
}
