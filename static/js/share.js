// Share control for the Bench: save the current inputs as a design, show the
// link ready to copy, keep the owner token in this browser; download the
// inputs as a design file and open one back. Loaded by the Bench page, it
// fills <div id="bench-extras"> and talks to window.ohmpickBench
// ({getInputs(), load(inputs)}) and its "bench:result" events.

const TOKENS_KEY = "ohmpick.owner_tokens";
const FILE_FORMAT = 1;

export const owner = {
  all() {
    try { return JSON.parse(localStorage.getItem(TOKENS_KEY) || "{}") || {}; } catch { return {}; }
  },
  get(id) { return this.all()[id] || null; },
  set(id, token) {
    const all = this.all(); all[id] = token;
    try { localStorage.setItem(TOKENS_KEY, JSON.stringify(all)); } catch { /* private mode: token shown once */ }
  },
  forget(id) {
    const all = this.all(); delete all[id];
    try { localStorage.setItem(TOKENS_KEY, JSON.stringify(all)); } catch { /* ignore */ }
  },
};

export async function call(path, { method = "GET", body, token } = {}) {
  const headers = { "Accept": "application/json" };
  if (body !== undefined) headers["Content-Type"] = "application/json";
  if (token) headers["X-Owner-Token"] = token;
  const res = await fetch(path, { method, headers, body: body === undefined ? undefined : JSON.stringify(body) });
  const data = (res.headers.get("content-type") || "").includes("json") ? await res.json() : null;
  if (!res.ok) {
    const e = (data && data.error) || {};
    const err = new Error(e.message || `request failed (${res.status})`);
    err.status = res.status; err.field = e.field || "";
    throw err;
  }
  return data;
}

// Clipboard: the async API needs a secure context (not a LAN http address).
export async function copyText(text, input) {
  try {
    if (navigator.clipboard && window.isSecureContext) { await navigator.clipboard.writeText(text); return true; }
  } catch { /* fall back */ }
  const field = input || Object.assign(document.createElement("textarea"), { value: text });
  if (!input) { field.setAttribute("readonly", ""); field.className = "sr-only"; document.body.appendChild(field); }
  field.select();
  let done = false;
  try { done = document.execCommand("copy"); } catch { done = false; }
  if (!input) field.remove();
  return done;
}

export function download(name, text) {
  const url = URL.createObjectURL(new Blob([text], { type: "application/json" }));
  const a = Object.assign(document.createElement("a"), { href: url, download: name });
  document.body.appendChild(a); a.click(); a.remove();
  setTimeout(() => URL.revokeObjectURL(url), 1000);
}

export function fileStem(name) {
  return (name || "design").toLowerCase().replace(/[^a-z0-9]+/g, "-").replace(/^-+|-+$/g, "").slice(0, 60) || "design";
}

const LOOPBACK = /^(127\.|localhost$|\[::1\]$)/;

function el(tag, attrs = {}, ...children) {
  const node = Object.assign(document.createElement(tag), attrs);
  for (const c of children) node.append(c);
  return node;
}

function build(host) {
  const card = el("section", { className: "card share", id: "share" });
  card.setAttribute("aria-labelledby", "share-title");
  const name = el("input", { type: "text", id: "share-name", maxLength: 200, required: true, placeholder: "e.g. Boiler over-temperature NTC" });
  name.dataset.field = "name";
  const notes = el("textarea", { id: "share-notes", maxLength: 2000, rows: 2, placeholder: "optional: what this is for" });
  notes.dataset.field = "notes";
  const save = el("button", { type: "submit", id: "share-save" }, "Save and get link");
  const form = el("form", { id: "share-form", className: "fields" },
    el("label", { className: "wide" }, "Name", name, el("span", { className: "field-error" })),
    el("label", { className: "wide" }, "Notes", notes, el("span", { className: "field-error" })),
    el("div", { className: "row wide" }, save));
  const problem = el("div", { className: "notice error", id: "share-problem", hidden: true });
  problem.setAttribute("role", "alert");

  const link = el("input", { type: "text", id: "share-link", readOnly: true });
  const copy = el("button", { type: "button", className: "quiet", id: "share-copy" }, "Copy link");
  const open = el("a", { className: "button quiet", id: "share-open", target: "_blank", rel: "noopener" }, "Open");
  const status = el("span", { className: "hint", id: "share-status" });
  status.setAttribute("role", "status");
  const token = el("code", { id: "share-token" });
  const lan = el("div", { className: "hint", id: "share-lan", hidden: true },
    "This link names this computer by its loopback address, which works only here. For colleagues, start ohmpick with ",
    el("code", {}, "ohmpick serve --lan"), ", open it at the network address it prints, and save from there.");
  const stale = el("div", { className: "notice warn", id: "share-stale", hidden: true },
    "The design changed since this link was saved; save again to share the change.");
  const done = el("div", { id: "share-done", className: "stack", hidden: true },
    el("label", {}, "Link for colleagues on the network", link),
    el("div", { className: "row" }, copy, open, status), lan, stale,
    el("div", { className: "hint" }, "Owner token (this browser keeps it; needed to rename or delete): ", token));

  const fileInput = el("input", { type: "file", id: "share-file", accept: ".json,application/json", className: "sr-only" });
  const exportBtn = el("button", { type: "button", className: "quiet", id: "share-export" }, "Download JSON");
  const importBtn = el("button", { type: "button", className: "quiet", id: "share-import" }, "Open a JSON file");
  const files = el("div", { className: "row" }, exportBtn, importBtn, fileInput);

  card.append(el("div", { className: "stack" }, el("h2", { id: "share-title" }, "Share"), form, problem, done,
    el("div", {}, el("h3", {}, "Design file"), files)));
  host.append(card);
  return { form, name, notes, save, problem, done, link, copy, open, status, token, lan, stale, fileInput, exportBtn, importBtn };
}

function bench() {
  const b = window.ohmpickBench;
  if (!b || typeof b.getInputs !== "function") throw new Error("the Bench is still loading; try again in a moment");
  return b;
}

function init() {
  const host = document.getElementById("bench-extras");
  if (!host) return;
  const ui = build(host);
  let savedInputs = null;
  // The name follows the Bench's own name field until typed here.
  let nameTyped = false, copyName = "";
  ui.name.addEventListener("input", () => { nameTyped = true; });
  const follow = (inputs) => { if (!nameTyped && inputs) ui.name.value = inputs.name || copyName || ""; };
  try { follow(bench().getInputs()); } catch { /* the Bench fills in later */ }

  document.addEventListener("bench:result", (ev) => {
    const inputs = ev.detail && ev.detail.inputs;
    follow(inputs);
    if (savedInputs && inputs) ui.stale.hidden = JSON.stringify(inputs) === savedInputs;
  });

  const showError = (err) => {
    ui.problem.hidden = false; ui.problem.textContent = err.message;
    const target = err.field === "name" ? ui.name : err.field === "notes" ? ui.notes : null;
    if (target) target.setAttribute("aria-invalid", "true");
  };
  const clearError = () => {
    ui.problem.hidden = true; ui.problem.textContent = "";
    ui.name.removeAttribute("aria-invalid"); ui.notes.removeAttribute("aria-invalid");
  };

  // A copy opened from a saved design: offer its name and notes for the new save.
  const copyId = new URLSearchParams(location.search).get("copy");
  if (copyId) {
    call(`/api/designs/${encodeURIComponent(copyId)}`).then((d) => {
      copyName = `${d.name} (copy)`.slice(0, 200);
      const fromBench = (() => { try { return bench().getInputs().name; } catch { return ""; } })();
      if (!nameTyped && !fromBench) ui.name.value = copyName;
      if (!ui.notes.value) ui.notes.value = d.notes || "";
    }).catch(() => { /* the Bench reports an unknown copy id */ });
  }

  ui.form.addEventListener("submit", async (ev) => {
    ev.preventDefault();
    clearError();
    let inputs;
    try { inputs = bench().getInputs(); } catch (err) { showError(err); return; }
    ui.save.disabled = true;
    try {
      const out = await call("/api/designs", { method: "POST", body: { ...inputs, name: ui.name.value, notes: ui.notes.value } });
      owner.set(out.id, out.owner_token);
      savedInputs = JSON.stringify(inputs);
      ui.link.value = out.url; ui.open.href = out.url; ui.token.textContent = out.owner_token;
      ui.lan.hidden = !LOOPBACK.test(new URL(out.url).hostname);
      ui.stale.hidden = true; ui.done.hidden = false;
      ui.status.textContent = "Saved. Copy the link and send it.";
      ui.link.focus(); ui.link.select();
    } catch (err) {
      showError(err);
    } finally {
      ui.save.disabled = false;
    }
  });

  ui.copy.addEventListener("click", async () => {
    const ok = await copyText(ui.link.value, ui.link);
    ui.status.textContent = ok ? "Link copied." : "Select the link and copy it (Ctrl+C).";
  });

  ui.exportBtn.addEventListener("click", () => {
    clearError();
    try {
      const inputs = bench().getInputs();
      const name = ui.name.value.trim() || "Bench design";
      const file = { ohmpick_design: FILE_FORMAT, name, notes: ui.notes.value, created: new Date().toISOString(), inputs };
      download(`${fileStem(name)}.ohmpick.json`, JSON.stringify(file, null, 2));
    } catch (err) { showError(err); }
  });

  ui.importBtn.addEventListener("click", () => ui.fileInput.click());
  ui.fileInput.addEventListener("change", async () => {
    clearError();
    const file = ui.fileInput.files && ui.fileInput.files[0];
    if (!file) return;
    try {
      const data = JSON.parse(await file.text());
      if (!data || data.ohmpick_design !== FILE_FORMAT || typeof data.inputs !== "object") {
        throw new Error(`${file.name} is not an ohmpick design file`);
      }
      bench().load(data.inputs);
      ui.name.value = data.name || ""; ui.notes.value = data.notes || "";
      ui.done.hidden = true; savedInputs = null;
    } catch (err) {
      showError(err instanceof SyntaxError ? new Error(`${file.name} is not valid JSON`) : err);
    } finally {
      ui.fileInput.value = "";
    }
  });
}

if (document.readyState === "loading") document.addEventListener("DOMContentLoaded", init);
else init();
