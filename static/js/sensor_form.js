// The sensor part of the Bench, Accuracy and Firmware forms (templates/sensor_form.html):
// a part list, a kind list and one group of parameter fields per kind. Each page
// names its own elements; this module reads the sensor object from them and fills
// them from a part or a saved sensor.
import { fmtOhm } from "./common.js";

const NUMBER = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;

// A number when the text is one, otherwise the text, so the server can name the field;
// undefined when empty. With a scale the number is the one typed × scale (to 12 digits,
// so 4.7 × 1e-3 does not come out as 0.0047000000000000004).
export function parseValue(raw, scale) {
  const s = String(raw ?? "").trim();
  if (s === "") return undefined;
  if (!NUMBER.test(s)) return s;
  return scale === undefined ? Number(s) : +(Number(s) * scale).toPrecision(12);
}

// Select `v`, adding it as an option first when the list lacks it (a saved design may name one).
export function ensureOption(select, v, label) {
  if (![...select.options].some(o => o.value === v)) select.add(new Option(label || v, v));
  select.value = v;
}

// ids: {form, part, kind, notes, lock (optional)}; kinds and parts: the page data's, keyed by kind and id
// (the parts object may be refilled later, it is read on every call).
// options.parse(el): how a parameter input becomes a value (default parseValue of its text);
// options.ohmDigits: show a part's resistances as "10 kΩ" with that many digits (default as stored);
// options.selectFirst: a choice the part leaves out shows the list's first entry (default blank).
export function sensorForm(ids, { kinds, parts }, options = {}) {
  const $ = id => document.getElementById(id);
  const form = $(ids.form);
  const partSelect = $(ids.part);
  const kindSelect = $(ids.kind);
  const parse = options.parse || (el => parseValue(el.value));
  const groupOf = kind => form.querySelector(`.kind-fields[data-kind="${CSS.escape(kind)}"]`);
  const params = kind => groupOf(kind).querySelectorAll("[data-param]");

  // The sensor the request carries: the part's id, or the kind with its typed parameters.
  function read() {
    if (partSelect.value) return { part: partSelect.value };
    const sensor = { kind: kindSelect.value };
    params(kindSelect.value).forEach(el => {
      const v = el.tagName === "SELECT" ? el.value : parse(el);
      if (v !== undefined) sensor[el.dataset.param] = v;
    });
    return sensor;
  }

  function partText(el, v) {
    if (v === undefined || v === null) return el.tagName === "SELECT" && options.selectFirst ? el.options[0].value : "";
    if (options.ohmDigits && el.dataset.param.endsWith("_ohm") && typeof v === "number") return fmtOhm(v, options.ohmDigits);
    return String(v);
  }

  // Show the chosen kind's fields (the others are disabled, so they are not read); a library
  // part fills them read-only. Returns the kind shown.
  function show() {
    const part = parts[partSelect.value];
    if (part) kindSelect.value = part.kind;
    const kind = kindSelect.value;
    form.querySelectorAll(".kind-fields").forEach(g => {
      const on = g.dataset.kind === kind;
      g.hidden = !on;
      g.querySelectorAll("input, select").forEach(el => { el.disabled = !on; });
    });
    params(kind).forEach(el => {
      if (part) el.value = partText(el, part.sensor[el.dataset.param]);
      if (el.tagName === "SELECT") el.disabled = !!part; else el.readOnly = !!part;
    });
    kindSelect.disabled = !!part;
    if (ids.lock) $(ids.lock).hidden = !part;
    $(ids.notes).textContent = part ? part.notes : "";
    return kind;
  }

  // Put a sensor object into the lists and fields (call show() after). A part the library
  // lacks is kept as an extra option with keepUnknownPart, else dropped; parameters the
  // object leaves out get the field's default with resetMissing, else keep their text.
  function fill(sensor, { keepUnknownPart = false, resetMissing = false } = {}) {
    sensor = sensor || {};
    if (sensor.part) {
      if (keepUnknownPart) ensureOption(partSelect, sensor.part, `${sensor.part} (not in the library)`);
      else partSelect.value = parts[sensor.part] ? sensor.part : "";
      return;
    }
    partSelect.value = "";
    if (!sensor.kind || !kinds[sensor.kind]) return;
    kindSelect.value = sensor.kind;
    params(sensor.kind).forEach(el => {
      const v = sensor[el.dataset.param];
      if (v !== undefined && v !== null) el.value = String(v);
      else if (resetMissing) {
        const f = kinds[sensor.kind].fields.find(x => x.name === el.dataset.param);
        el.value = f && f.default !== null ? String(f.default) : "";
      }
    });
  }

  function currentKind() {
    const part = parts[partSelect.value];
    return part ? part.kind : kindSelect.value;
  }

  // A pot wired as a divider has no fixed resistor (its wiring defaults to divider).
  function isPotDivider() {
    const part = parts[partSelect.value];
    if (part) return part.kind === "pot" && (part.sensor.wiring || "divider") === "divider";
    if (kindSelect.value !== "pot") return false;
    const wiring = groupOf("pot").querySelector('[data-param="wiring"]');
    return !wiring || (wiring.value || "divider") === "divider";
  }

  return { partSelect, kindSelect, groupOf, read, show, fill, currentKind, isPotDivider };
}
