// The review page: one sentence at a time, words selectable by mouse or keys, every change saved at once.
// The server checks each change with the rules of `itinerant check`, refuses a change made on a stale copy,
// and writes the file atomically. Changes not yet confirmed by the server are kept in localStorage and sent
// again, in order, until the server answers.
"use strict";

const KEYS = [
  ["n / PageDown", "next sentence"],
  ["p / PageUp", "previous sentence"],
  ["← →", "move the word cursor"],
  ["Shift + ← →", "stretch the selection"],
  ["Home / End", "first / last word"],
  ["t", "new event: the selection is its trigger"],
  ["Shift + t", "move the current event's trigger to the selection"],
  ["1 … 9", "give the selection that role in the current event (or change the picked role)"],
  ["e / Shift + e", "next / previous event"],
  ["] / [", "pick the next / previous role of the current event"],
  ["x", "delete the picked role"],
  ["Shift + x", "delete the current event"],
  ["a", "accept the sentence as it stands (gold)"],
  ["r", "mark the sentence reviewed (corrected)"],
  ["z", "undo the last change"],
  ["u", "show unreviewed sentences only"],
  ["l", "lowest confidence first"],
  ["f", "next document filter"],
  ["Esc", "clear the selection and the picked role"],
];

const state = {
  file: "", version: "", roles: [], records: [], reviewed: 0, total: 0,
  currentId: null, event: 0, focus: null, sel: null, cursor: 0, anchor: null, dragging: false,
  queue: [], sending: false, undo: [], stale: false,
};

const $ = (id) => document.getElementById(id);
const clone = (value) => JSON.parse(JSON.stringify(value));
const storeKey = () => `itinerant-review:${state.file}`;

// ------------------------------------------------------------------ loading

async function load() {
  const response = await fetch("/api/file", { cache: "no-store" });
  const data = await response.json();
  if (!response.ok) { showBanner(`${data.error} — ${data.fix}`); return; }
  Object.assign(state, { file: data.file, version: data.version, roles: data.roles, records: data.records,
                         reviewed: data.reviewed, total: data.total, stale: false, queue: [], undo: [] });
  $("file").textContent = data.file.split(/[\\/]/).pop();
  $("file").title = data.file;
  const docs = [...new Set(data.records.map((r) => r.doc))];
  const select = $("doc");
  select.replaceChildren(new Option("all documents", ""), ...docs.map((d) => new Option(d, d)));
  if (!state.currentId || !byId(state.currentId)) state.currentId = data.records[0].id;
  buildKeys();
  buildLegend();
  hideBanner();
  saveState("every change is saved as you make it", "saved");
  resumeStored();
  show();
}

function byId(id) { return state.records.find((r) => r.id === id); }
function current() { return byId(state.currentId); }

// ------------------------------------------------------------------ the visible order

function visible() {
  const onlyUnreviewed = $("only-unreviewed").checked;
  const doc = $("doc").value;
  const shown = state.records.map((r, i) => [r, i]).filter(([r]) =>
    r.id === state.currentId || ((!onlyUnreviewed || r.status !== "reviewed") && (!doc || r.doc === doc)));
  if ($("low-first").checked) {
    shown.sort(([a, i], [b, j]) => (a.lowest ?? 2) - (b.lowest ?? 2) || i - j);
  }
  return shown.map(([r]) => r);
}

function move(step) {
  const list = visible();
  const at = list.findIndex((r) => r.id === state.currentId);
  const next = list[at + step];
  if (!next) { say(step > 0 ? "this is the last sentence shown" : "this is the first sentence shown"); return; }
  goTo(next.id);
}

function goTo(id) {
  state.currentId = id;
  state.event = 0; state.focus = null; state.sel = null; state.cursor = 0; state.anchor = null;
  say("");
  show();
}

function firstShown() {
  if (passes(current())) { show(); return; }
  const next = visible().find((r) => passes(r));
  if (next) goTo(next.id); else { say("no sentence matches these filters; the current one stays shown"); show(); }
}

function passes(record) {
  const doc = $("doc").value;
  return (!$("only-unreviewed").checked || record.status !== "reviewed") && (!doc || record.doc === doc);
}

// ------------------------------------------------------------------ drawing

function spanText(record, span) { return record.text.slice(span[0], span[1]); }
function roleIndex(role) { const i = state.roles.indexOf(role); return i < 0 ? 6 : Math.min(i, 6); }
function confText(value) { return value === undefined || value === null ? "" : value.toFixed(2); }

function show() {
  const record = current();
  if (!record) return;
  const events = record.events || [];
  if (state.event >= events.length) state.event = Math.max(0, events.length - 1);
  const list = visible();
  $("position").textContent = `sentence ${list.findIndex((r) => r.id === record.id) + 1} of ${list.length} shown`;
  $("counter").textContent = `reviewed ${state.reviewed} / ${state.total}`;
  $("record-id").textContent = `${record.id} · ${record.doc}`;
  const status = $("status");
  status.className = record.status;
  status.textContent = record.events === null ? "not annotated yet"
    : record.status === "reviewed" ? `reviewed (${record.provenance || "gold"})` : "model's suggestion, not reviewed";
  const position = state.records.indexOf(record);
  const before = state.records[position - 1], after = state.records[position + 1];
  $("before").textContent = before && before.doc === record.doc ? before.text : "";
  $("after").textContent = after && after.doc === record.doc ? after.text : "";
  drawSentence(record, events);
  drawEvents(record, events);
}

function drawSentence(record, events) {
  const box = $("sentence");
  box.replaceChildren();
  const event = events[state.event];
  const triggerOf = (i) => {
    const [s, e] = record.tokens[i];
    const hit = events.findIndex((ev) => ev.trigger[0] <= s && e <= ev.trigger[1]);
    return hit < 0 ? null : hit;
  };
  const rolesOf = (i) => {
    if (!event) return [];
    const [s, e] = record.tokens[i];
    return event.roles.map((r, k) => [r, k]).filter(([r]) => r.span[0] <= s && e <= r.span[1]);
  };
  const selected = (i) => state.sel && state.sel[0] <= i && i <= state.sel[1];
  let last = 0;
  record.tokens.forEach(([s, e], i) => {
    if (s > last) {
      const gap = document.createElement("span");
      gap.className = "gap";
      gap.textContent = record.text.slice(last, s);
      const prev = i > 0 ? rolesOf(i - 1).map(([, k]) => k) : [];
      const shared = rolesOf(i).filter(([, k]) => prev.includes(k));
      if (shared.length) decorate(gap, shared[0][0]);
      if (i > 0 && selected(i - 1) && selected(i)) gap.classList.add("sel");
      box.append(gap);
    }
    const tok = document.createElement("span");
    tok.className = "tok";
    tok.dataset.i = i;
    tok.textContent = record.text.slice(s, e);
    const trig = triggerOf(i);
    if (trig !== null) tok.classList.add("trig", trig === state.event ? "cur" : "other");
    const roles = rolesOf(i);
    if (roles.length) decorate(tok, roles[0][0]);
    if (selected(i)) tok.classList.add("sel");
    if (i === state.cursor && state.sel) tok.classList.add("cursor");
    box.append(tok);
    // Labels after the last word of a span: the trigger of each event, the roles of the current event.
    events.forEach((ev, k) => {
      if (ev.trigger[1] === e) box.append(tag(k === state.event ? "trigger" : `trigger ${k + 1}`, "t", ev.confidence));
    });
    if (event) event.roles.forEach((r) => { if (r.span[1] === e) box.append(tag(r.role, `c-${roleIndex(r.role)}`, r.confidence)); });
    last = e;
  });
  if (last < record.text.length) box.append(document.createTextNode(record.text.slice(last)));
}

function decorate(element, role) {
  element.classList.add("role", `r-${roleIndex(role.role)}`, role.confidence === undefined ? "checked" : "model");
  element.dataset.role = role.role;
}

function tag(label, kind, confidence) {
  const t = document.createElement("span");
  t.className = `tag ${kind}${confidence === undefined ? "" : " model"}`;
  t.textContent = confidence === undefined ? label : `${label} ${confText(confidence)}`;
  t.title = confidence === undefined ? `${label} (checked)` : `${label}: the model's suggestion, confidence ${confText(confidence)}`;
  return t;
}

function drawEvents(record, events) {
  const list = $("events");
  list.replaceChildren();
  const none = $("no-events");
  none.hidden = events.length > 0;
  none.textContent = record.events === null ? "Not annotated yet: press a to say it holds no motion, or t to mark a trigger."
    : "No motion event here. Select a word and press t to add one.";
  events.forEach((ev, k) => {
    const item = document.createElement("li");
    item.dataset.event = k;
    if (k === state.event) item.classList.add("current");
    const head = document.createElement("div");
    head.className = "ev-head";
    const name = document.createElement("span");
    name.textContent = `${k + 1}. ${spanText(record, ev.trigger)}`;
    const conf = document.createElement("span");
    conf.className = "conf";
    conf.textContent = ev.confidence === undefined ? "" : `model ${confText(ev.confidence)}`;
    head.append(name, conf, button("delete event", () => deleteEvent(k)));
    item.append(head);
    const roles = document.createElement("ul");
    roles.className = "roles";
    ev.roles.forEach((r, j) => {
      const row = document.createElement("li");
      row.dataset.role = `${k}-${j}`;
      if (state.focus && state.focus[0] === k && state.focus[1] === j) row.classList.add("focus");
      const label = tag(r.role, `c-${roleIndex(r.role)}`, undefined);
      const words = document.createElement("span");
      words.className = "words";
      words.textContent = spanText(record, r.span);
      const c = document.createElement("span");
      c.className = "conf";
      c.textContent = r.confidence === undefined ? "" : confText(r.confidence);
      row.append(label, words, c, button("×", () => deleteRole(k, j), `delete this ${r.role}`));
      row.addEventListener("click", (event) => { event.stopPropagation(); state.event = k; state.focus = [k, j]; show(); });
      roles.append(row);
    });
    item.append(roles);
    item.addEventListener("click", () => { state.event = k; state.focus = null; show(); });
    list.append(item);
  });
}

function button(text, action, title) {
  const b = document.createElement("button");
  b.className = "del";
  b.type = "button";
  b.textContent = text;
  if (title) b.title = title;
  b.addEventListener("click", (event) => { event.stopPropagation(); action(); });
  return b;
}

function buildKeys() {
  const rows = KEYS.map(([keys, what]) => `<tr><td>${keys.split(" / ").map((k) => `<kbd>${k}</kbd>`).join(" / ")}</td><td>${what}</td></tr>`);
  const roleKeys = state.roles.slice(0, 9).map((r, i) => `<kbd>${i + 1}</kbd> ${r}`).join(", ");
  $("key-table").innerHTML = rows.join("") + `<tr><td>roles</td><td>${roleKeys}</td></tr>`;
}

function buildLegend() {
  const legend = $("legend");
  legend.replaceChildren();
  state.roles.forEach((role) => {
    const item = document.createElement("span");
    const sample = document.createElement("span");
    decorate(sample, { role });
    sample.textContent = role;
    item.append(sample, tag(role, `c-${roleIndex(role)}`, undefined));
    legend.append(item);
  });
  const trig = document.createElement("span");
  trig.innerHTML = '<span class="trig">trigger</span>';
  const model = document.createElement("span");
  model.append(tag("role", "c-6", 0.62));
  model.append(" dashed, italic label: the model's suggestion with its confidence; tinted words: checked by a person");
  legend.append(trig, model);
}

// ------------------------------------------------------------------ messages

function say(text, kind = "") { const m = $("message"); m.textContent = text; m.className = kind; }
function showBanner(text, reload = false) {
  const banner = $("banner");
  banner.textContent = text;
  if (reload) banner.append(button("reload the file", () => load()));
  banner.hidden = false;
}
function hideBanner() { $("banner").hidden = true; }
function saveState(text, kind) { const s = $("save-state"); s.textContent = text; s.className = kind; }

// ------------------------------------------------------------------ changes

function selectionSpan(record) {
  if (!state.sel) return null;
  return [record.tokens[state.sel[0]][0], record.tokens[state.sel[1]][1]];
}

function overlaps(a, b) { return Math.min(a[1], b[1]) > Math.max(a[0], b[0]); }

// Apply a change to the page at once and queue it for the server.
function change(record, events, action, note) {
  if (state.stale) { showBanner("This page's copy is out of date; reload the file before changing anything.", true); return; }
  state.undo.push({ id: record.id, events: clone(record.events), provenance: record.provenance });
  record.events = events;
  enqueue({ id: record.id, events, action });
  state.sel = null; state.anchor = null; state.focus = null;
  say(note || "");
  show();
}

function editable(record) { return clone(record.events || []); }

function newEvent() {
  const record = current();
  const span = selectionSpan(record);
  if (!span) { say("select the trigger word first (click it, or move the cursor with ← →)", "warn"); return; }
  const events = editable(record);
  events.push({ trigger: span, roles: [] });
  state.event = events.length - 1;
  change(record, events, "edit", `new event: ${spanText(record, span)}`);
  state.event = events.length - 1;
  show();
}

function moveTrigger() {
  const record = current();
  const span = selectionSpan(record);
  const events = editable(record);
  if (!events.length) { newEvent(); return; }
  if (!span) { say("select the new trigger words first", "warn"); return; }
  events[state.event].trigger = span;
  delete events[state.event].confidence;
  const keep = state.event;
  change(record, events, "edit", `trigger moved to ${spanText(record, span)}`);
  state.event = keep;
  show();
}

function giveRole(role) {
  const record = current();
  const events = editable(record);
  if (!events.length) { say("mark the trigger first (select it, press t)", "warn"); return; }
  const event = events[state.event];
  const span = selectionSpan(record);
  const keep = state.event;
  if (state.focus && state.focus[0] === state.event) {
    const picked = event.roles[state.focus[1]];
    event.roles[state.focus[1]] = { role, span: span || picked.span };
    change(record, events, "edit", `${picked.role} ${spanText(record, picked.span)} → ${role} ${spanText(record, span || picked.span)}`);
  } else if (span) {
    const same = event.roles.findIndex((r) => r.role === role && overlaps(r.span, span));
    if (same >= 0 && event.roles[same].span[0] === span[0] && event.roles[same].span[1] === span[1]) {
      say(`already marked: ${role} ${spanText(record, span)}`); return;
    }
    if (same >= 0) {
      const old = event.roles[same];
      event.roles[same] = { role, span };
      change(record, events, "edit", `${role} corrected: ${spanText(record, old.span)} → ${spanText(record, span)}`);
    } else {
      event.roles.push({ role, span });
      change(record, events, "edit", `${role}: ${spanText(record, span)}`);
    }
  } else {
    say("select the words first, or pick a role to change with ] or a click", "warn"); return;
  }
  state.event = keep;
  show();
}

function deleteRole(k, j) {
  const record = current();
  const events = editable(record);
  const gone = events[k].roles.splice(j, 1)[0];
  change(record, events, "edit", `deleted ${gone.role} ${spanText(record, gone.span)}`);
  state.event = k;
  show();
}

function deleteEvent(k) {
  const record = current();
  const events = editable(record);
  const gone = events.splice(k, 1)[0];
  change(record, events, "edit", `deleted the event of ${spanText(record, gone.trigger)}`);
}

function review(action) {
  const record = current();
  change(record, editable(record), action, action === "accept" ? "accepted as it stands" : "marked reviewed");
  move(1);
}

function undo() {
  const last = state.undo.pop();
  if (!last) { say("nothing to undo"); return; }
  const record = byId(last.id);
  record.events = last.events;
  enqueue({ id: last.id, events: last.events, action: "restore", provenance: last.provenance });
  if (state.currentId !== last.id) goTo(last.id); else show();
  say("undone");
}

// ------------------------------------------------------------------ saving, in order, kept until confirmed

function enqueue(item) {
  state.queue.push(item);
  store();
  send();
}

function store() {
  try { localStorage.setItem(storeKey(), JSON.stringify({ version: state.version, queue: state.queue })); } catch (e) { /* private mode */ }
}

function resumeStored() {
  let stored = null;
  try { stored = JSON.parse(localStorage.getItem(storeKey()) || "null"); } catch (e) { stored = null; }
  if (!stored || !stored.queue || !stored.queue.length) return;
  if (stored.version === state.version) {
    state.queue = stored.queue;
    stored.queue.forEach((item) => { const r = byId(item.id); if (r) r.events = item.events; });
    say(`sending ${stored.queue.length} change(s) not confirmed before the page closed`);
    send();
  } else {
    localStorage.removeItem(storeKey());
    showBanner(`${stored.queue.length} change(s) from an earlier visit (${stored.queue.map((i) => i.id).join(", ")}) were not saved: the file has changed since. Make them again if they are missing.`);
  }
}

async function send() {
  if (state.sending || !state.queue.length) return;
  state.sending = true;
  saveState(`saving ${state.queue.length} change(s)…`, "pending");
  const item = state.queue[0];
  let response, data;
  try {
    response = await fetch(`/api/records/${encodeURIComponent(item.id)}`, {
      method: "POST", headers: { "Content-Type": "application/json" },
      body: JSON.stringify({ version: state.version, events: item.events, action: item.action, provenance: item.provenance ?? null }),
    });
    data = await response.json();
  } catch (error) {
    state.sending = false;
    saveState(`not saved yet: the server does not answer (${state.queue.length} change(s) kept in this browser; retrying)`, "failed");
    setTimeout(send, 2000);
    return;
  }
  state.sending = false;
  if (response.ok) {
    state.queue.shift();
    state.version = data.version;
    const at = state.records.findIndex((r) => r.id === data.record.id);
    const pendingForIt = state.queue.some((q) => q.id === data.record.id);
    if (at >= 0 && !pendingForIt) state.records[at] = data.record;
    else if (at >= 0) Object.assign(state.records[at], { status: data.record.status, provenance: data.record.provenance, tokens: data.record.tokens });
    state.reviewed = data.reviewed; state.total = data.total;
    store();
    if (data.warnings.length) say(`saved, with warnings: ${data.warnings.join("; ")}`, "warn");
    saveState(state.queue.length ? `saving ${state.queue.length} change(s)…` : "all changes saved", state.queue.length ? "pending" : "saved");
    show();
    send();
    return;
  }
  const failed = state.queue.splice(0);
  store();
  if (response.status === 409) {
    state.stale = true;
    showBanner(`Not saved: ${data.error}. ${data.fix}.`, true);
  } else {
    say(`Not saved: ${data.error} — ${data.fix}`, "error");
  }
  saveState(`${failed.length} change(s) not saved`, "failed");
  await reloadRecords(failed);
}

// After a refusal: show the file as it really is, for the records the refused changes touched.
async function reloadRecords(failed) {
  const response = await fetch("/api/file", { cache: "no-store" });
  if (!response.ok) return;
  const data = await response.json();
  for (const item of failed) {
    const fresh = data.records.find((r) => r.id === item.id);
    const at = state.records.findIndex((r) => r.id === item.id);
    if (fresh && at >= 0) state.records[at] = fresh;
  }
  if (!state.stale) state.version = data.version;
  show();
}

// ------------------------------------------------------------------ mouse

function tokenAt(target) { const t = target.closest && target.closest(".tok"); return t ? Number(t.dataset.i) : null; }

$("sentence").addEventListener("mousedown", (event) => {
  const i = tokenAt(event.target);
  if (i === null) return;
  event.preventDefault();
  if (event.shiftKey && state.anchor !== null) { selectTo(i); return; }
  state.anchor = i; state.cursor = i; state.sel = [i, i]; state.dragging = true;
  show();
});
$("sentence").addEventListener("mouseover", (event) => {
  if (!state.dragging) return;
  const i = tokenAt(event.target);
  if (i !== null) selectTo(i);
});
document.addEventListener("mouseup", () => { state.dragging = false; });

function selectTo(i) {
  const a = state.anchor ?? i;
  state.sel = [Math.min(a, i), Math.max(a, i)];
  state.cursor = i;
  show();
}

// ------------------------------------------------------------------ keys

function moveCursor(to, extend) {
  const record = current();
  const i = Math.max(0, Math.min(record.tokens.length - 1, to));
  if (extend) { if (state.anchor === null) state.anchor = state.cursor; selectTo(i); return; }
  state.anchor = i; state.cursor = i; state.sel = [i, i];
  show();
}

function cycleDoc() {
  const select = $("doc");
  select.selectedIndex = (select.selectedIndex + 1) % select.options.length;
  say(select.value ? `document ${select.value} only` : "all documents");
  firstShown();
}

function pickRole(step) {
  const events = current().events || [];
  const event = events[state.event];
  if (!event || !event.roles.length) { say("the current event has no roles"); return; }
  const at = state.focus && state.focus[0] === state.event ? state.focus[1] : (step > 0 ? -1 : event.roles.length);
  state.focus = [state.event, (at + step + event.roles.length) % event.roles.length];
  show();
}

function cycleEvent(step) {
  const events = current().events || [];
  if (!events.length) { say("no events in this sentence"); return; }
  state.event = (state.event + step + events.length) % events.length;
  state.focus = null;
  show();
}

const ACTIONS = {
  n: () => move(1), PageDown: () => move(1), p: () => move(-1), PageUp: () => move(-1),
  ArrowRight: (e) => moveCursor(state.cursor + 1, e.shiftKey), ArrowLeft: (e) => moveCursor(state.cursor - 1, e.shiftKey),
  Home: (e) => moveCursor(0, e.shiftKey), End: (e) => moveCursor(current().tokens.length - 1, e.shiftKey),
  t: () => newEvent(), T: () => moveTrigger(),
  e: () => cycleEvent(1), E: () => cycleEvent(-1),
  "]": () => pickRole(1), "[": () => pickRole(-1),
  x: () => { if (state.focus) deleteRole(state.focus[0], state.focus[1]); else say("pick a role first (] or a click)", "warn"); },
  X: () => { if ((current().events || []).length) deleteEvent(state.event); else say("no event to delete"); },
  a: () => review("accept"), r: () => review("reviewed"), z: () => undo(),
  u: () => { const box = $("only-unreviewed"); box.checked = !box.checked; firstShown(); },
  l: () => { const box = $("low-first"); box.checked = !box.checked; show(); },
  f: () => cycleDoc(),
  Escape: () => { state.sel = null; state.anchor = null; state.focus = null; say(""); show(); },
};

document.addEventListener("keydown", (event) => {
  if (event.ctrlKey || event.metaKey || event.altKey) return;
  if (event.target && ["INPUT", "SELECT", "TEXTAREA"].includes(event.target.tagName) && event.key !== "Escape") return;
  if (/^[1-9]$/.test(event.key)) {
    const role = state.roles[Number(event.key) - 1];
    if (role) { event.preventDefault(); giveRole(role); }
    return;
  }
  const action = ACTIONS[event.key];
  if (!action || !current()) return;
  event.preventDefault();
  action(event);
});

$("only-unreviewed").addEventListener("change", firstShown);
$("low-first").addEventListener("change", show);
$("doc").addEventListener("change", () => { $("doc").blur(); firstShown(); });

load();
