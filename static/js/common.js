/* Rondo page helpers shared by every screen.
   Every piece of stored text reaches the page through textContent, never as markup. */
"use strict";

const Rondo = (() => {
  class ApiError extends Error {
    constructor(status, body) {
      super((body && body.message) || `the laptop answered ${status}`);
      this.status = status;
      this.body = body || {};
    }
  }

  /* One request to the laptop. extra: {headers, signal, meta}; meta.savedAt is set when the
     answer is the copy the service worker saved on the phone (static/sw.js). */
  async function send(method, path, body, extra) {
    const more = extra || {};
    const options = { method, headers: { Accept: "application/json", ...(more.headers || {}) } };
    if (more.signal) options.signal = more.signal;
    if (body !== undefined) {
      options.headers["Content-Type"] = "application/json";
      options.body = JSON.stringify(body);
    }
    let response;
    try {
      response = await fetch(path, options);
    } catch (err) {
      throw new ApiError(0, { message: "The laptop does not answer. Is Rondo running there?" });
    }
    if (more.meta) more.meta.savedAt = response.headers.get("X-Rondo-Copy-Saved-At");
    const text = await response.text();
    let data = null;
    try { data = text ? JSON.parse(text) : null; } catch (err) { data = { message: text }; }
    if (!response.ok) throw new ApiError(response.status, data);
    return data;
  }

  /* What the screens call: through the offline outbox (static/js/offline.js) when loaded. */
  function api(method, path, body) {
    const outbox = window.RondoOffline;
    return outbox ? outbox.route(method, path, body) : send(method, path, body);
  }

  /* el("li", {class: "x", onclick: fn}, "text", child...) */
  function el(tag, attrs, ...children) {
    const node = document.createElement(tag);
    for (const [key, value] of Object.entries(attrs || {})) {
      if (value === undefined || value === null || value === false) continue;
      if (key.startsWith("on")) node.addEventListener(key.slice(2), value);
      else if (key === "class") node.className = value;
      else if (key === "dataset") Object.assign(node.dataset, value);
      else node.setAttribute(key, value === true ? "" : String(value));
    }
    for (const child of children.flat()) {
      if (child === null || child === undefined || child === false) continue;
      node.append(child instanceof Node ? child : document.createTextNode(String(child)));
    }
    return node;
  }

  const SVG_NS = "http://www.w3.org/2000/svg";
  function svg(tag, attrs, text) {
    const node = document.createElementNS(SVG_NS, tag);
    for (const [key, value] of Object.entries(attrs || {})) node.setAttribute(key, String(value));
    if (text !== undefined) node.textContent = text;
    return node;
  }

  let toastTimer = null;
  function toast(message, bad) {
    const box = document.getElementById("toast");
    box.textContent = message;
    box.classList.toggle("bad", Boolean(bad));
    box.hidden = false;
    clearTimeout(toastTimer);
    toastTimer = setTimeout(() => { box.hidden = true; }, bad ? 7000 : 3500);
  }

  function clearErrors(scope) {
    for (const p of scope.querySelectorAll(".field-error")) p.textContent = "";
    for (const input of scope.querySelectorAll("[aria-invalid]")) input.removeAttribute("aria-invalid");
  }

  /* Put each field's message under its input; whatever has no place goes to the toast. */
  function showErrors(scope, error) {
    clearErrors(scope);
    const fields = (error.body && error.body.fields) || [];
    const homeless = [];
    for (const f of fields) {
      const spot = scope.querySelector(`.field-error[data-for="${CSS.escape(f.field)}"]`);
      const input = scope.querySelector(`[name="${CSS.escape(f.field)}"]`);
      if (input) input.setAttribute("aria-invalid", "true");
      if (spot) spot.textContent = f.message;
      else homeless.push(f.message);
    }
    if (!fields.length || homeless.length) toast(homeless.join(" ") || error.message, true);
  }

  function pad(n) { return String(n).padStart(2, "0"); }
  function todayISO() {
    const d = new Date();
    return `${d.getFullYear()}-${pad(d.getMonth() + 1)}-${pad(d.getDate())}`;
  }
  function nowHHMM() {
    const d = new Date();
    return `${pad(d.getHours())}:${pad(d.getMinutes())}`;
  }
  function clock(minutes) {
    const m = Math.round(minutes);
    return `${pad(Math.floor(m / 60))}:${pad(m % 60)}`;
  }
  function km(x) { return `${(Math.round(x * 10) / 10).toFixed(1)} km`; }
  function minutes(x) {
    const m = Math.round(x);
    if (m < 60) return `${m} min`;
    return `${Math.floor(m / 60)} h ${pad(m % 60)} min`;
  }
  function signed(text, value) { return value > 0.05 ? `+${text}` : value < -0.05 ? `\u2212${text.replace("-", "")}` : text; }

  /* Poll a job until it ends; onTick sees each state; stop() abandons it on the laptop too. */
  function follow(job, onTick) {
    let stopped = false;
    let timer = null;
    const done = new Promise((resolve, reject) => {
      async function tick() {
        if (stopped) return;
        try {
          job = await api("GET", `/api/jobs/${encodeURIComponent(job.id)}`);
        } catch (err) { reject(err); return; }
        onTick(job);
        if (["done", "failed", "cancelled"].includes(job.state)) resolve(job);
        else timer = setTimeout(tick, 400);
      }
      onTick(job);
      timer = setTimeout(tick, 250);
    });
    async function stop() {
      stopped = true;
      clearTimeout(timer);
      try { await api("DELETE", `/api/jobs/${encodeURIComponent(job.id)}`); } catch (err) { /* already gone */ }
    }
    return { done, stop };
  }

  /* Follow a job in the page's #progress box with its "stop waiting" button. Resolves to the
     job once it is done, or null when it failed (toast says why), was stopped or superseded;
     ``state.running`` holds the job being followed. */
  function watchJob(job, { state, title, failText }) {
    const $ = (id) => document.getElementById(id);
    const box = $("progress");
    box.hidden = false;
    $("progress-title").textContent = title;
    const handle = follow(job, (j) => {
      const pct = Math.round(j.progress * 100);
      $("progress-fill").style.width = `${pct}%`;
      $("progress-meter").setAttribute("aria-valuenow", String(pct));
      $("progress-text").textContent = `${j.elapsed_s.toFixed(0)} s of at most ${j.time_limit_s.toFixed(0)} s`;
    });
    state.running = handle;
    $("progress-cancel").onclick = async () => {
      await handle.stop();
      state.running = null;
      box.hidden = true;
      toast("Stopped waiting. Nothing was changed.");
    };
    return handle.done.then((j) => {
      if (state.running !== handle) return null;
      state.running = null;
      box.hidden = true;
      if (j.state === "failed") {
        toast((j.error && j.error.message) || failText, true);
        return null;
      }
      return j.state === "done" ? j : null;
    }).catch((err) => {
      state.running = null;
      box.hidden = true;
      toast(err.message, true);
      return null;
    });
  }

  /* Ask the laptop how it reads a typed position and show that under the input. */
  function echoLocation(input, out) {
    let timer = null;
    let seq = 0;
    async function check() {
      const text = input.value.trim();
      const mine = ++seq;
      if (!text) { out.textContent = ""; return null; }
      try {
        const pos = await api("POST", "/api/parse-location", { text });
        if (mine !== seq) return null;
        out.classList.remove("bad");
        out.textContent = `Reads as ${latLonWords(pos.lat, pos.lon)}`;
        input.removeAttribute("aria-invalid");
        return pos;
      } catch (err) {
        if (mine !== seq) return null;
        out.classList.add("bad");
        const said = (err.body && err.body.fields && err.body.fields[0].message) || err.message;
        const quoted = `text '${text}' `;
        out.textContent = said.startsWith(quoted) ? `It ${said.slice(quoted.length)}` : said;
        return null;
      }
    }
    input.addEventListener("input", () => { clearTimeout(timer); timer = setTimeout(check, 350); });
    input.addEventListener("change", check);
    return check;
  }

  function latLonWords(lat, lon) {
    const ns = lat >= 0 ? "N" : "S";
    const ew = lon >= 0 ? "E" : "W";
    return `${Math.abs(lat).toFixed(5)}\u00b0 ${ns}, ${Math.abs(lon).toFixed(5)}\u00b0 ${ew}`;
  }

  function formValues(form) {
    const out = {};
    for (const input of form.querySelectorAll("input, select, textarea")) {
      if (!input.name) continue;
      if (input.type === "checkbox") out[input.name] = input.checked;
      else if (input.type === "radio") { if (input.checked) out[input.name] = input.value; }
      else out[input.name] = input.value;
    }
    return out;
  }

  /* A number field: "" stays null so the laptop says it is missing, text stays text. */
  function numberOrRaw(text) {
    const t = String(text).trim();
    if (t === "") return null;
    const n = Number(t);
    return Number.isFinite(n) ? n : t;
  }

  return { ApiError, api, send, el, svg, toast, clearErrors, showErrors, todayISO, nowHHMM, clock, km,
    minutes, signed, follow, watchJob, echoLocation, latLonWords, formValues, numberOrRaw };
})();
