/* Away from the laptop: registers the service worker (static/sw.js), says when the laptop is out
   of reach and which saved copy is on screen, and keeps done marks, client edits and
   last-minute visits in an outbox on the phone (localStorage) until the laptop answers.
   The conflict rule is RULE below; the outbox panel shows it to the rep. */
"use strict";

window.RondoOffline = (() => {
  const { ApiError, el } = Rondo;
  const STORE_KEY = "rondo.outbox.v1";
  const PROBE_EVERY_MS = 15000; // how often to look for the laptop while away (no source)
  const SEND_WAIT_MS = 8000; // one outbox send gives up after this and retries later
  const SENT_SHOWN_MS = 10 * 60 * 1000; // a sent change stays listed this long
  const KEEP_SENT = 8;
  const DAY_PATH = /^\/api\/days\/(\d{4}-\d{2}-\d{2})$/;
  const DONE_PATH = /^\/api\/days\/(\d{4}-\d{2}-\d{2})\/done\/(\d+)$/;
  const VISIT_PATH = /^\/api\/days\/(\d{4}-\d{2}-\d{2})\/visits$/;
  const CLIENT_PATH = /^\/api\/clients\/(\d+)$/;
  const CLIENT_FIELDS = ["name", "location", "visit_min", "windows", "notes", "active"];
  const FIELD_WORDS = { name: "name", location: "location", visit_min: "visit length",
    windows: "opening hours", notes: "notes", active: "in planning or not" };
  const RULE = "Changes made while the laptop is out of reach wait on this phone and go to it "
    + "in the order you made them, as soon as it answers. The laptop's copy wins for plans: an "
    + "order worked out there is never replaced by the phone's copy. A done mark is applied "
    + "unless the visit was taken off the day on the laptop; then it stays here, marked "
    + "\u201cneeds a look\u201d. A last-minute visit is added unless the laptop refuses it (for "
    + "example, closed that day); then it stays here too. For a client, only the fields you "
    + "changed are sent; if the laptop changed the same field meanwhile, your edit stays here, "
    + "marked \u201cneeds a look\u201d, with both versions shown. Nothing you typed is dropped "
    + "unless you drop it yourself.";

  const KEPT = "Kept on this phone: it goes to the laptop as soon as it answers.";

  const state = {
    reachable: navigator.onLine ? null : false, // null: not known yet
    stale: new Map(), // what is on screen from a saved copy -> when it was saved (ISO)
    reads: new Set(), // reads made before the service worker controlled the page
    days: new Map(), // last day views from the laptop, by path
    clients: new Map(), // last copy of each client from the laptop, by id
    flushing: null,
    dropArmed: null,
    looked: 0, // changes needing a look at the last render
  };

  /* ---- the outbox in localStorage ---- */

  function load() {
    try {
      const items = JSON.parse(localStorage.getItem(STORE_KEY) || "[]");
      return Array.isArray(items) ? items : [];
    } catch (err) {
      return [];
    }
  }

  function save(items) {
    const cutoff = Date.now() - 24 * 3600 * 1000;
    const sent = items.filter((i) => i.state === "sent" && Date.parse(i.sent_at) > cutoff)
      .slice(-KEEP_SENT);
    localStorage.setItem(STORE_KEY, JSON.stringify(items.filter((i) => i.state !== "sent")
      .concat(sent).sort((a, b) => a.seq - b.seq)));
    render();
  }

  function patch(id, changes) {
    const items = load();
    const item = items.find((i) => i.id === id);
    if (item) Object.assign(item, changes);
    save(items);
    return item;
  }

  function waiting() { return load().filter((i) => i.state === "waiting"); }

  function newId() {
    if (window.crypto && crypto.randomUUID) return crypto.randomUUID();
    return `${Date.now().toString(36)}-${Math.random().toString(36).slice(2, 14)}`;
  }

  /* ---- reading ---- */

  function where(path) { return new URL(path, window.location.origin); }

  function staleKey(path) {
    const url = where(path);
    return url.pathname.startsWith("/api/clients") ? "/api/clients" : url.pathname;
  }

  function isDayView(data) {
    return Boolean(data && typeof data.date === "string" && Array.isArray(data.choices)
      && Array.isArray(data.done));
  }

  /* A day the laptop sent in answer to a write or a finished solve: keep it for offline use. */
  function rememberDay(data) {
    const view = isDayView(data) ? data : (data && isDayView(data.result) ? data.result : null);
    if (!view) return;
    const path = `/api/days/${view.date}`;
    state.days.set(path, view);
    const worker = navigator.serviceWorker && navigator.serviceWorker.controller;
    if (worker) worker.postMessage({ type: "remember", path, body: view });
  }

  function learn(path, data) {
    const url = where(path);
    if (url.pathname === "/api/clients" && Array.isArray(data)) {
      for (const c of data) state.clients.set(c.id, c);
    } else if (CLIENT_PATH.test(url.pathname) && data && data.id) {
      state.clients.set(data.id, data);
    } else if (DAY_PATH.test(url.pathname) && isDayView(data)) {
      state.days.set(url.pathname, data);
    }
  }

  async function read(path) {
    if (!(navigator.serviceWorker && navigator.serviceWorker.controller)) state.reads.add(path);
    const meta = {};
    let data;
    try {
      data = await Rondo.send("GET", path, undefined, { meta });
    } catch (err) {
      if (err.status === 0) setReachable(false);
      throw err;
    }
    if (meta.savedAt) {
      state.stale.set(staleKey(path), meta.savedAt);
      // A solve that was running when the copy was saved cannot be followed from here.
      if (data && typeof data === "object" && "job" in data) data.job = null;
      setReachable(false);
    } else {
      state.stale.delete(staleKey(path));
      setReachable(true);
      rememberDay(data && data.state === "done" ? data : null);
    }
    learn(path, data);
    render();
    return overlay(path, data);
  }

  /* ---- what the screen shows while changes wait ---- */

  function toMinutes(hhmm) {
    const [h, m] = String(hhmm).split(":").map(Number);
    return h * 60 + m;
  }

  function byName(a, b) { return a.name.localeCompare(b.name, undefined, { sensitivity: "base" }); }

  function overlayDay(view) {
    const items = waiting().filter((i) => i.date === view.date && i.kind !== "client");
    if (!items.length) return view;
    const out = structuredClone(view);
    for (const item of items) {
      if (item.kind === "visit" && !out.choices.some((c) => c.client_id === item.client_id)) {
        const c = state.clients.get(item.client_id) || {};
        const hours = c.windows ? c.windows[out.weekday] : "";
        out.choices.push({ client_id: item.client_id, name: c.name || item.name,
          visit_min: c.visit_min, lat: c.location && c.location.lat, lon: c.location && c.location.lon,
          active: true, added_late: item.body.late !== false, closed: hours === "closed",
          windows: hours || "", done: null, queued: true });
        out.choices.sort(byName);
        if (out.plan) out.plan.stale = true;
      } else if (item.kind === "done") {
        const choice = out.choices.find((c) => c.client_id === item.client_id);
        if (!choice) continue; // taken off the day: the outbox lists it instead
        const done = { arrived: item.body.arrived, departed: item.body.departed,
          arrived_min: toMinutes(item.body.arrived), departed_min: toMinutes(item.body.departed) };
        choice.done = done;
        out.done = out.done.filter((d) => d.client_id !== item.client_id)
          .concat([{ client_id: item.client_id, name: choice.name, ...done, queued: true }]);
        out.done.sort(byName);
      }
    }
    return out;
  }

  function applyClient(client, body) {
    const out = { ...client };
    for (const field of CLIENT_FIELDS) {
      if (!(field in body)) continue;
      if (field === "location") out.location = { ...(client.location || {}), text: String(body.location) };
      else if (field === "windows") out.windows = { ...body.windows };
      else out[field] = body[field];
    }
    return out;
  }

  function overlayClients(path, data) {
    const edits = waiting().filter((i) => i.kind === "client");
    if (!edits.length) return data;
    const fold = (c) => edits.filter((i) => i.client_id === c.id)
      .reduce((acc, i) => applyClient(acc, i.body), c);
    if (Array.isArray(data)) {
      const active = where(path).searchParams.get("active");
      return data.map(fold).filter((c) => active === null || String(c.active) === active);
    }
    return data && data.id ? fold(data) : data;
  }

  function overlay(path, data) {
    const url = where(path);
    if (DAY_PATH.test(url.pathname) && isDayView(data)) return overlayDay(data);
    if (url.pathname === "/api/clients" || CLIENT_PATH.test(url.pathname)) return overlayClients(path, data);
    return data;
  }

  /* ---- writing ---- */

  function kindOf(method, pathname) {
    if (method === "PUT" && DONE_PATH.test(pathname)) return "done";
    if (method === "POST" && VISIT_PATH.test(pathname)) return "visit";
    if (method === "PUT" && CLIENT_PATH.test(pathname)) return "client";
    return null;
  }

  function nameOf(clientId, date) {
    const day = state.days.get(`/api/days/${date}`);
    const choice = day && day.choices.find((c) => c.client_id === clientId);
    const client = state.clients.get(clientId);
    return (choice && choice.name) || (client && client.name) || `client ${clientId}`;
  }

  async function keep(kind, method, path, body, id) {
    const pathname = where(path).pathname;
    const match = (DONE_PATH.exec(pathname) || VISIT_PATH.exec(pathname) || CLIENT_PATH.exec(pathname));
    const item = { id, seq: Date.now() + Math.random(), kind, method, path: pathname, body,
      state: "waiting", made_at: new Date().toISOString() };
    if (kind === "client") {
      item.client_id = Number(match[1]);
      const base = state.clients.get(item.client_id);
      item.base = base ? structuredClone(base) : null;
      item.name = String(body.name || (base && base.name) || `client ${item.client_id}`);
    } else {
      item.date = match[1];
      item.client_id = kind === "done" ? Number(match[2]) : Number(body && body.client_id);
      item.name = nameOf(item.client_id, item.date);
    }
    try {
      save(load().concat([item]));
    } catch (err) {
      throw new ApiError(0, { message: `The laptop does not answer, and this phone could not keep the change (${err.message}). Write it down.` });
    }
    const answer = await answerFor(item, body);
    // After the screen's own message about the change, say where it really is.
    setTimeout(() => Rondo.toast(KEPT), 0);
    return answer;
  }

  /* What the laptop would have answered, worked out from the phone's copy. */
  async function answerFor(item, body) {
    if (item.kind === "client") return item.base ? applyClient(item.base, body) : { id: item.client_id, ...body };
    const dayPath = `/api/days/${item.date}`;
    try {
      return await read(dayPath);
    } catch (err) {
      const last = state.days.get(dayPath);
      if (last) return overlayDay(last);
      throw new ApiError(0, { message: KEPT });
    }
  }

  async function write(kind, method, path, body) {
    if (waiting().length) await flush();
    const id = newId();
    if (!waiting().length) {
      try {
        const headers = kind === "visit" ? { "Idempotency-Key": `"${id}"` } : undefined;
        const data = await Rondo.send(method, path, body, { headers });
        setReachable(true);
        rememberDay(data);
        if (kind === "client" && data) state.clients.set(data.id, data);
        return data;
      } catch (err) {
        if (err.status !== 0) throw err;
        setReachable(false);
        // The laptop may have applied it before the answer was lost; the outbox sends it
        // again under the same key, and a done mark or client edit is the same twice.
      }
    }
    return keep(kind, method, path, body, id);
  }

  /* Undo of a done mark that never left the phone: take it out of the outbox. */
  function cancelDone(pathname) {
    const [, date, clientId] = DONE_PATH.exec(pathname);
    const items = load();
    const found = items.find((i) => i.state === "waiting" && i.kind === "done" && i.date === date
      && i.client_id === Number(clientId));
    if (!found) return null;
    save(items.filter((i) => i !== found));
    const last = state.days.get(`/api/days/${date}`);
    return last ? overlayDay(last) : null;
  }

  async function route(method, path, body) {
    if (method === "GET") return read(path);
    const pathname = where(path).pathname;
    const kind = kindOf(method, pathname);
    if (kind) return write(kind, method, path, body);
    if (method === "DELETE" && DONE_PATH.test(pathname)) {
      const undone = cancelDone(pathname);
      if (undone) return undone;
    }
    try {
      const data = await Rondo.send(method, path, body);
      setReachable(true);
      rememberDay(data);
      return data;
    } catch (err) {
      if (err.status !== 0) throw err;
      setReachable(false);
      throw new ApiError(0, { message: "The laptop does not answer, and this needs it. Done marks, "
        + "client edits and last-minute visits can wait on this phone; this cannot." });
    }
  }

  /* ---- sending the outbox ---- */

  function waitSignal() {
    return AbortSignal.timeout ? AbortSignal.timeout(SEND_WAIT_MS) : undefined;
  }

  function same(field, a, b) {
    const norm = (v) => {
      if (field === "location") return v && typeof v === "object" ? String(v.text || `${v.lat}, ${v.lon}`) : String(v);
      if (field === "windows") {
        const w = v || {};
        return ["mon", "tue", "wed", "thu", "fri", "sat", "sun"].map((d) => String(w[d] || "").trim()).join("|");
      }
      if (field === "visit_min") return String(Number(v));
      return JSON.stringify(v === undefined ? null : v);
    };
    return norm(a) === norm(b);
  }

  function shown(field, value) {
    if (field === "location") return value && typeof value === "object" ? value.text : String(value);
    if (field === "windows") return Object.entries(value || {}).filter(([, v]) => v).map(([d, v]) => `${d} ${v}`).join(", ") || "any time";
    if (field === "active") return value ? "in planning" : "left out";
    return String(value === "" ? "(empty)" : value);
  }

  async function sendClient(item, signal, again) {
    const meta = {};
    const now = await Rondo.send("GET", `/api/clients/${item.client_id}`, undefined, { meta, signal });
    if (meta.savedAt) return { outcome: "away" }; // the worker's copy: the laptop did not answer
    const fields = CLIENT_FIELDS.filter((f) => f in item.body);
    const mine = item.base ? fields.filter((f) => !same(f, item.body[f], item.base[f])) : fields;
    if (!item.force) {
      const clashes = item.base
        ? mine.filter((f) => !same(f, now[f], item.base[f]) && !same(f, now[f], item.body[f]))
        : mine.filter((f) => !same(f, now[f], item.body[f]));
      if (clashes.length) {
        const what = clashes.map((f) => `${FIELD_WORDS[f][0].toUpperCase()}${FIELD_WORDS[f].slice(1)}: the laptop has \u201c${shown(f, now[f])}\u201d, you typed \u201c${shown(f, item.body[f])}\u201d`);
        const lead = item.base ? "Changed on the laptop too since you edited it" : "The phone had no copy of this client to compare with";
        return { outcome: "look", problem: `${lead}. ${what.join("; ")}.`, clash: true };
      }
    }
    const changes = Object.fromEntries(mine.filter((f) => !same(f, now[f], item.body[f])).map((f) => [f, item.body[f]]));
    if (!Object.keys(changes).length) return { outcome: "sent", note: "the laptop already had it" };
    // Made from the version just read: a change on the laptop in between is refused (409)
    // and the merge is done once more against the newer copy.
    if (Number.isInteger(now.version)) changes.version = now.version;
    try {
      const saved = await Rondo.send("PUT", item.path, changes, { signal });
      state.clients.set(saved.id, saved);
      return { outcome: "sent" };
    } catch (err) {
      if (err.status === 409 && !again) return sendClient(item, signal, true);
      throw err;
    }
  }

  async function attempt(item) {
    const signal = waitSignal();
    try {
      if (item.kind === "client") return await sendClient(item, signal);
      const headers = item.kind === "visit" ? { "Idempotency-Key": `"${item.id}"` } : undefined;
      rememberDay(await Rondo.send(item.method, item.path, item.body, { headers, signal }));
      return { outcome: "sent" };
    } catch (err) {
      if (!(err instanceof ApiError) || err.status === 0 || err.status >= 500
          || [401, 403, 408, 429].includes(err.status)) return { outcome: "away" };
      return refused(item, err, signal);
    }
  }

  async function refused(item, err, signal) {
    if (item.kind === "done" && err.status === 404) {
      return { outcome: "look", problem: "The laptop no longer has this visit on the day (it was "
        + `taken off there). Your times are kept here: arrived ${item.body.arrived}, left ${item.body.departed}.` };
    }
    if (item.kind === "visit") {
      try {
        const day = await Rondo.send("GET", `/api/days/${item.date}`, undefined, { signal });
        if (day.choices.some((c) => c.client_id === item.client_id)) {
          rememberDay(day);
          return { outcome: "sent", note: "it was already on the day" };
        }
      } catch (again) { /* keep the first refusal */ }
    }
    return { outcome: "look", problem: `The laptop refused it: ${err.message}` };
  }

  function flush() {
    if (state.flushing) return state.flushing;
    const run = async () => {
      let sent = 0;
      for (;;) {
        const item = waiting()[0];
        if (!item) break;
        const result = await attempt(item);
        if (result.outcome === "away") { setReachable(false); break; }
        state.reachable = true;
        if (result.outcome === "sent") {
          patch(item.id, { state: "sent", sent_at: new Date().toISOString(), note: result.note || null, problem: null });
          sent += 1;
        } else {
          patch(item.id, { state: "look", problem: result.problem, clash: Boolean(result.clash) });
        }
      }
      return sent;
    };
    const locked = navigator.locks ? navigator.locks.request("rondo-outbox", run) : run();
    state.flushing = locked.finally(() => { state.flushing = null; render(); });
    state.flushing.then((sent) => { if (sent) refreshScreen(); }, () => null);
    return state.flushing;
  }

  /* ---- is the laptop there? ---- */

  function setReachable(value) {
    const was = state.reachable;
    state.reachable = value;
    if (value && was !== true && waiting().length) flush();
    render();
  }

  async function probe() {
    try {
      // HEAD passes the service worker by (it only answers GET), so this asks the laptop itself.
      const response = await fetch("/api/settings", { method: "HEAD", cache: "no-store", signal: waitSignal() });
      setReachable(response.status < 500);
    } catch (err) {
      setReachable(false);
    }
  }

  /* After the outbox reached the laptop, the screen reads the laptop's copy again. */
  function refreshScreen() {
    const date = document.getElementById("day-date");
    if (date && date.value) { date.dispatchEvent(new Event("change")); return; }
    const search = document.getElementById("client-search");
    if (search) search.dispatchEvent(new Event("input"));
  }

  /* ---- the bar ---- */

  const ui = {};

  function clockOf(iso) {
    const d = new Date(iso);
    const pad = (n) => String(n).padStart(2, "0");
    const hhmm = `${pad(d.getHours())}:${pad(d.getMinutes())}`;
    if (d.toDateString() === new Date().toDateString()) return hhmm;
    return `${d.toLocaleDateString(undefined, { day: "numeric", month: "short" })} ${hhmm}`;
  }

  function dayWords(date) {
    return new Date(`${date}T12:00:00`).toLocaleDateString(undefined, { weekday: "short", day: "numeric", month: "short" });
  }

  function staleWords() {
    const entries = [...state.stale.entries()];
    if (!entries.length) return "";
    const days = entries.filter(([k]) => DAY_PATH.test(k));
    const words = { "/api/clients": "the client book", "/api/settings": "your settings",
      "/api/drives": "your drives", "/api/days": "the list of planned days" };
    const byTime = new Map();
    for (const [k, at] of days.concat(entries.filter(([k]) => !DAY_PATH.test(k)))) {
      const m = DAY_PATH.exec(k);
      const what = m ? `the plan for ${dayWords(m[1])}` : (words[k] || "data");
      byTime.set(clockOf(at), (byTime.get(clockOf(at)) || []).concat([what]));
    }
    const and = (list) => (list.length > 1 ? `${list.slice(0, -1).join(", ")} and ${list[list.length - 1]}` : list[0]);
    const parts = [...byTime].map(([at, whats]) => `${and(whats)} saved on this phone at ${at}`);
    return `Showing ${parts.join("; ")}.`;
  }

  /* One short line for the top of the screen; the details hold the full sentence. */
  function headline(away, wait, look) {
    const entries = [...state.stale.entries()];
    const day = entries.find(([k]) => DAY_PATH.test(k));
    const saved = day ? `plan saved at ${clockOf(day[1])}`
      : entries.length ? `copy saved at ${clockOf(entries[0][1])}` : "";
    if (away) return `Offline \u00b7 ${saved || "the laptop does not answer"}`;
    if (saved) return `Laptop back \u00b7 on screen: ${saved}`;
    if (wait) return "Laptop answers \u00b7 sending";
    if (look) return `Laptop answers \u00b7 ${look === 1 ? "1 needs" : `${look} need`} a look`;
    return "Laptop answers \u00b7 all sent";
  }

  function describe(item) {
    if (item.kind === "done") return `Done: ${item.name}, ${item.body.arrived}\u2013${item.body.departed} (${dayWords(item.date)})`;
    if (item.kind === "visit") return `Last-minute visit: ${item.name} (${dayWords(item.date)})`;
    const fields = CLIENT_FIELDS.filter((f) => f in item.body && (!item.base || !same(f, item.body[f], item.base[f])));
    return `${item.name}: ${fields.map((f) => FIELD_WORDS[f]).join(", ") || "nothing"} changed`;
  }

  function dropButton(item) {
    const armed = state.dropArmed === item.id;
    return el("button", { type: "button", class: `button small ${armed ? "danger" : "secondary"}`,
      onclick: () => {
        if (!armed) { state.dropArmed = item.id; render(); return; }
        state.dropArmed = null;
        save(load().filter((i) => i.id !== item.id));
      } }, armed ? "Tap again to drop it" : "Drop it");
  }

  function itemRow(item) {
    const when = item.state === "sent" ? `sent ${clockOf(item.sent_at)}${item.note ? ` (${item.note})` : ""}`
      : item.state === "look" ? `needs a look \u00b7 kept ${clockOf(item.made_at)}`
        : `waiting \u00b7 kept ${clockOf(item.made_at)}`;
    const actions = [];
    if (item.state === "look") {
      actions.push(el("button", { type: "button", class: "button small", onclick: () => {
        patch(item.id, { state: "waiting", force: Boolean(item.clash), problem: null });
        flush();
      } }, item.clash ? "Send mine anyway" : "Send again"));
    }
    if (item.state !== "sent") actions.push(dropButton(item));
    return el("li", { class: `outbox-item ${item.state}`, dataset: { kind: item.kind } },
      el("span", { class: "outbox-what" }, describe(item)),
      el("span", { class: "outbox-when" }, when),
      item.problem ? el("p", { class: "outbox-problem" }, item.problem) : null,
      actions.length ? el("div", { class: "row" }, ...actions) : null);
  }

  function build() {
    const bar = document.getElementById("offline-bar");
    if (!bar) return false;
    ui.bar = bar;
    ui.line = el("p", { class: "offline-line", id: "offline-line", role: "status", "aria-live": "polite" });
    ui.stale = el("p", { class: "offline-stale", id: "offline-stale" });
    ui.reload = el("button", { type: "button", class: "button small secondary", id: "offline-reload",
      onclick: () => window.location.reload() }, "Refresh");
    ui.summary = el("summary", { id: "outbox-summary" });
    ui.list = el("ol", { class: "outbox-list", id: "outbox-list" });
    ui.visitSelect = el("select", { id: "offline-visit-client", name: "client_id" });
    ui.visitForm = el("form", { class: "offline-visit stack", id: "offline-visit", novalidate: true },
      el("label", { class: "field" }, el("span", {}, "A last-minute visit for this day"), ui.visitSelect),
      el("button", { type: "submit", class: "button secondary", id: "offline-visit-keep" }, "Keep it for the laptop"),
      el("p", { class: "hint" }, "The laptop adds it when it answers; then plan the rest of the day again from where you are."));
    ui.visitForm.addEventListener("submit", keepVisit);
    ui.details = el("details", { class: "outbox", id: "outbox" }, ui.summary, ui.stale, ui.list,
      ui.visitForm, el("p", { class: "hint outbox-rule", id: "outbox-rule" }, RULE));
    bar.replaceChildren(el("div", { class: "offline-head" }, ui.line, ui.reload), ui.details);
    return true;
  }

  function dayDate() {
    const input = document.getElementById("day-date");
    return input && input.value ? input.value : null;
  }

  async function keepVisit(event) {
    event.preventDefault();
    const date = dayDate();
    const clientId = Number(ui.visitSelect.value);
    if (!date || !clientId) return;
    try {
      await Rondo.api("POST", `/api/days/${date}/visits`, { client_id: clientId, late: true });
      refreshScreen();
    } catch (err) {
      Rondo.toast(err.message, true);
    }
  }

  function renderVisitForm(away) {
    const date = dayDate();
    const day = date && state.days.get(`/api/days/${date}`);
    ui.visitForm.hidden = !(away && date);
    if (ui.visitForm.hidden) return;
    const taken = new Set((day ? overlayDay(day).choices : []).map((c) => c.client_id));
    const weekday = day ? day.weekday : null;
    const options = [...state.clients.values()]
      .filter((c) => c.active && !taken.has(c.id) && !(weekday && c.windows && c.windows[weekday] === "closed"))
      .sort(byName).map((c) => el("option", { value: c.id }, c.name));
    const optionsKey = options.map((o) => o.value).join(",");
    if (optionsKey !== ui.optionsKey) { // an open picker is not reset under the rep's thumb
      ui.optionsKey = optionsKey;
      const keepValue = ui.visitSelect.value;
      ui.visitSelect.replaceChildren(...options);
      if (keepValue && options.some((o) => o.value === keepValue)) ui.visitSelect.value = keepValue;
    }
    ui.visitForm.querySelector("button").disabled = options.length === 0;
  }

  function render() {
    if (!ui.bar && !build()) return;
    const items = load();
    const open = items.filter((i) => i.state !== "sent");
    const look = items.filter((i) => i.state === "look");
    const recent = items.filter((i) => i.state === "sent" && Date.now() - Date.parse(i.sent_at) < SENT_SHOWN_MS);
    const away = state.reachable === false;
    ui.bar.hidden = !away && !open.length && !recent.length && !state.stale.size;
    ui.bar.classList.toggle("away", away);
    ui.bar.classList.toggle("look", look.length > 0);
    const wait = open.length - look.length;
    ui.line.textContent = headline(away, wait, look.length);
    ui.stale.textContent = staleWords();
    ui.stale.hidden = !state.stale.size;
    ui.reload.hidden = away || !state.stale.size;
    const parts = [];
    if (wait) parts.push(wait === 1 ? "1 change waits to be sent" : `${wait} changes wait to be sent`);
    if (look.length) parts.push(look.length === 1 ? "1 needs a look" : `${look.length} need a look`);
    if (!parts.length) {
      parts.push(recent.length ? `Sent: ${recent.length} ${recent.length === 1 ? "change" : "changes"}, last at ${clockOf(recent[recent.length - 1].sent_at)}`
        : "Nothing waits to be sent");
    }
    ui.summary.textContent = parts.join(" \u00b7 ");
    ui.bar.dataset.waiting = String(wait);
    ui.bar.dataset.look = String(look.length);
    // Rebuilt only when something changed, so a tap never lands on a row being replaced.
    const shownItems = open.concat(recent);
    const listKey = JSON.stringify([state.dropArmed, shownItems.map((i) => [i.id, i.state, i.problem, i.sent_at])]);
    if (listKey !== ui.listKey) {
      ui.listKey = listKey;
      ui.list.replaceChildren(...shownItems.map(itemRow));
    }
    renderVisitForm(away);
    // Open the panel when a change newly needs a look; the rep may close it again.
    if (look.length > state.looked) ui.details.open = true;
    state.looked = look.length;
    tagRows();
  }

  /* Rows of the day screen whose done mark is still on the phone get a "waiting" tag. */
  function tagRows() {
    const date = dayDate();
    const ids = new Set(waiting().filter((i) => i.kind === "done" && i.date === date).map((i) => String(i.client_id)));
    const names = new Set(waiting().filter((i) => i.kind === "done" && i.date === date).map((i) => i.name));
    for (const li of document.querySelectorAll("#stops > li[data-client-id]")) {
      li.classList.toggle("queued", ids.has(li.dataset.clientId));
    }
    for (const li of document.querySelectorAll("#done-list > li")) {
      const strong = li.querySelector("strong");
      li.classList.toggle("queued", Boolean(strong && names.has(strong.textContent)));
    }
  }

  /* ---- the service worker ---- */

  function warm() {
    const worker = navigator.serviceWorker.controller;
    if (!worker) return;
    const urls = [...state.reads, window.location.pathname + window.location.search];
    for (const frame of document.querySelectorAll("iframe[src]")) {
      const url = new URL(frame.getAttribute("src"), window.location.href);
      if (url.origin === window.location.origin) urls.push(url.pathname + url.search);
    }
    state.reads.clear();
    worker.postMessage({ type: "warm", urls });
  }

  function register() {
    const root = document.documentElement;
    if (!("serviceWorker" in navigator) || !window.isSecureContext) {
      // Plain http to another address: browsers allow no service worker there (https needed).
      root.dataset.offlineReady = "no-worker";
      return;
    }
    navigator.serviceWorker.addEventListener("message", (event) => {
      if (event.data && event.data.type === "warmed") root.dataset.offlineReady = "yes";
    });
    if (navigator.serviceWorker.controller) root.dataset.offlineReady = "yes";
    else navigator.serviceWorker.addEventListener("controllerchange", warm, { once: true });
    navigator.serviceWorker.register("/sw.js", { scope: "/" }).catch((err) => {
      root.dataset.offlineReady = "failed";
      console.warn("Rondo could not install its offline copy:", err.message);
    });
  }

  /* ---- start ---- */

  // /day?date=... served from the phone's copy of /day: put the date back before day.js reads it.
  const dateInput = document.getElementById("day-date");
  const asked = new URLSearchParams(window.location.search).get("date");
  if (dateInput && !dateInput.value && asked && /^\d{4}-\d{2}-\d{2}$/.test(asked)) dateInput.value = asked;

  register();
  render();
  const main = document.getElementById("main");
  if (main) new MutationObserver(tagRows).observe(main, { childList: true, subtree: true });
  window.addEventListener("online", probe);
  window.addEventListener("offline", () => setReachable(false));
  window.addEventListener("storage", (event) => { if (event.key === STORE_KEY) render(); });
  setInterval(() => { if (state.reachable === false || waiting().length) probe(); }, PROBE_EVERY_MS);
  if (waiting().length) probe();

  return { route, flush, probe, outbox: load, rule: RULE };
})();
