// Saved designs: the list (/designs: live filter, marks the designs this
// browser owns, imports a design file) and a design's page (/d/<id>: plots,
// copy link, rename and delete with the owner token kept in this browser).
import { pageData, draw, wireTwins, debounce } from "./common.js";
import { owner, call, copyText } from "./share.js";

const data = pageData();

function listPage() {
  const form = document.getElementById("filter-form");
  const input = document.getElementById("filter-name");
  const tbody = document.querySelector("#designs tbody");
  const empty = document.getElementById("list-empty");
  const count = document.getElementById("list-count");
  const problem = document.getElementById("list-problem");
  const mine = owner.all();

  const markMine = () => tbody.querySelectorAll("tr[data-id]").forEach((tr) => {
    const badge = tr.querySelector(".mine");
    if (badge) badge.hidden = !mine[tr.dataset.id];
  });

  const row = (d) => {
    const tr = document.createElement("tr");
    tr.dataset.id = d.id;
    const name = document.createElement("td");
    const a = Object.assign(document.createElement("a"), { href: `/d/${encodeURIComponent(d.id)}`, textContent: d.name });
    const badge = Object.assign(document.createElement("span"), { className: "muted mine", textContent: "(yours)", hidden: true });
    name.append(a, " ", badge);
    if (d.notes) {
      const text = d.notes.length > 120 ? d.notes.slice(0, 117) + "..." : d.notes;
      name.append(Object.assign(document.createElement("div"), { className: "hint note", textContent: text }));
    }
    const kind = Object.assign(document.createElement("td"), { textContent: d.kind });
    const when = Object.assign(document.createElement("td"), { className: "num", textContent: d.created.slice(0, 16).replace("T", " ") });
    tr.append(name, kind, when);
    return tr;
  };

  const refresh = debounce(async () => {
    const name = input.value.trim();
    try {
      const out = await call(`/api/designs?name=${encodeURIComponent(name)}`);
      tbody.replaceChildren(...out.designs.map(row));
      count.textContent = String(out.designs.length);
      empty.hidden = out.designs.length > 0;
      if (!out.designs.length) empty.textContent = name ? `No saved design has “${name}” in its name.` : "Nothing saved yet.";
      markMine();
      problem.hidden = true;
      history.replaceState(null, "", name ? `/designs?name=${encodeURIComponent(name)}` : "/designs");
    } catch (err) {
      problem.hidden = false; problem.textContent = err.message;
    }
  }, 180);
  input.addEventListener("input", refresh);
  form.addEventListener("submit", (ev) => { ev.preventDefault(); refresh(); });
  markMine();

  const importForm = document.getElementById("import-form");
  const file = document.getElementById("import-file");
  importForm.addEventListener("submit", async (ev) => {
    ev.preventDefault();
    problem.hidden = true;
    const f = file.files && file.files[0];
    if (!f) { problem.hidden = false; problem.textContent = "Choose a design file (.json) first."; return; }
    let body;
    try { body = JSON.parse(await f.text()); } catch {
      problem.hidden = false; problem.textContent = `${f.name} is not valid JSON.`; return;
    }
    try {
      const out = await call("/api/designs/import", { method: "POST", body });
      owner.set(out.id, out.owner_token);
      location.assign(`/d/${encodeURIComponent(out.id)}`);
    } catch (err) {
      problem.hidden = false; problem.textContent = `${f.name}: ${err.message}`;
    }
  });
}

function designPage() {
  for (const f of data.figures || []) {
    const el = document.getElementById(f.id);
    if (el) draw(el, f.figure);
  }
  wireTwins(document);

  const status = document.getElementById("copy-status");
  const copy = document.getElementById("copy-link");
  copy.addEventListener("click", async () => {
    const ok = await copyText(copy.dataset.url);
    status.textContent = ok ? "Link copied." : `Copy this link: ${copy.dataset.url}`;
  });

  const panel = document.getElementById("owner-panel");
  const claim = document.getElementById("owner-claim");
  const problem = document.getElementById("owner-problem");
  const showOwner = () => {
    const mine = Boolean(owner.get(data.id));
    panel.hidden = !mine; claim.hidden = mine;
  };
  showOwner();

  const fail = (err) => {
    problem.hidden = false; problem.textContent = err.message;
    if (err.status === 401 || err.status === 403) { owner.forget(data.id); showOwner(); }
  };

  document.getElementById("claim-form").addEventListener("submit", (ev) => {
    ev.preventDefault();
    const token = document.getElementById("claim-token").value.trim();
    if (token) { owner.set(data.id, token); showOwner(); }
  });

  document.getElementById("rename-form").addEventListener("submit", async (ev) => {
    ev.preventDefault();
    problem.hidden = true;
    const name = document.getElementById("rename-name").value;
    const notes = document.getElementById("rename-notes").value;
    try {
      const out = await call(data.api_url, { method: "PATCH", body: { name, notes }, token: owner.get(data.id) });
      document.getElementById("design-name").textContent = out.name;
      const box = document.getElementById("design-notes");
      box.replaceChildren();
      box.hidden = !out.notes;
      out.notes.split("\n").forEach((line, i) => { if (i) box.append(document.createElement("br")); box.append(line); });
      document.title = `${out.name} · ohmpick`;
      status.textContent = "Changes saved.";
    } catch (err) { fail(err); }
  });

  document.getElementById("delete-design").addEventListener("click", async () => {
    if (!window.confirm("Delete this design for everyone? Links to it will stop working.")) return;
    try {
      await call(data.api_url, { method: "DELETE", token: owner.get(data.id) });
      owner.forget(data.id);
      location.assign("/designs");
    } catch (err) { fail(err); }
  });
}

if (document.getElementById("designs")) listPage();
else if (data.id) designPage();
