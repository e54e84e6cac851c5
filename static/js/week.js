/* Week screen: say who is due, have the laptop spread them over the days, move or pin a visit
   after seeing its cost, price a client who calls, and open each day in the day screen. */
"use strict";

(() => {
  const { api, el, svg, toast, showErrors, clearErrors, follow, watchJob, km, minutes, signed } = Rondo;
  const $ = (id) => document.getElementById(id);
  const WEEKDAYS = ["mon", "tue", "wed", "thu", "fri", "sat", "sun"];
  const MONTHS = ["Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec"];
  const dateInput = $("week-date");
  const state = { clients: [], view: null, running: null, due: new Map(), moving: null };

  /* ---- dates: a week is named by its Monday ---- */

  function parseISO(text) {
    const [y, m, d] = text.split("-").map(Number);
    return new Date(y, m - 1, d, 12);
  }
  function iso(date) {
    return `${date.getFullYear()}-${String(date.getMonth() + 1).padStart(2, "0")}-${String(date.getDate()).padStart(2, "0")}`;
  }
  function mondayOf(text) {
    const date = parseISO(text);
    date.setDate(date.getDate() - ((date.getDay() + 6) % 7));
    return iso(date);
  }
  function shortDate(text) {
    const date = parseISO(text);
    return `${date.getDate()} ${MONTHS[date.getMonth()]}`;
  }
  function monday() { return mondayOf(dateInput.value); }
  function weekPath(suffix) { return `/api/weeks/${encodeURIComponent(monday())}${suffix || ""}`; }

  /* ---- loading ---- */

  async function loadAll() {
    state.clients = await api("GET", "/api/clients?active=true");
    await loadWeek();
  }

  async function loadWeek() {
    if (!dateInput.value) return;
    const start = parseISO(monday());
    const end = new Date(start);
    end.setDate(end.getDate() + 6);
    $("week-span").textContent = `Monday ${shortDate(iso(start))} to Sunday ${shortDate(iso(end))}`;
    const view = await api("GET", weekPath());
    state.due = new Map();
    const active = new Set(state.clients.map((c) => c.id));
    if (view.planned) {
      for (const c of view.spec.clients) {
        if (active.has(c.client_id)) state.due.set(c.client_id, { visits: c.visits, gap: c.min_gap_days });
      }
    } else {
      for (const c of state.clients) state.due.set(c.id, { visits: 1, gap: 1 });
    }
    fillForm(view);
    render(view);
    if (view.job && !state.running) watch(view.job);
  }

  /* ---- the form: working days, caps, clients due ---- */

  function fillForm(view) {
    const days = view.planned ? view.spec.days : WEEKDAYS.slice(0, 5);
    for (const box of document.querySelectorAll('input[name="day"]')) box.checked = days.includes(box.value);
    $("max-visits").value = view.planned && view.spec.max_visits ? view.spec.max_visits : "";
    $("max-work").value = view.planned && view.spec.max_work_min ? view.spec.max_work_min / 60 : "";
    $("setup-box").open = !view.planned;
    renderDue();
  }

  function workingDays() {
    return [...document.querySelectorAll('input[name="day"]:checked')].map((b) => b.value);
  }

  function renderDue() {
    const needle = $("due-search").value.trim().toLowerCase();
    const nDays = Math.max(1, workingDays().length);
    const rows = state.clients
      .filter((c) => !needle || c.name.toLowerCase().includes(needle) || c.notes.toLowerCase().includes(needle))
      .map((c) => {
        const due = state.due.get(c.id);
        const visits = el("select", { "aria-label": `Visits to ${c.name} this week`, class: "due-visits",
          onchange: (e) => { state.due.set(c.id, { ...state.due.get(c.id), visits: Number(e.target.value) }); renderDue(); } },
        ...[1, 2, 3].filter((n) => n <= nDays).map((n) => el("option", { value: n, selected: due && due.visits === n },
          n === 1 ? "once" : n === 2 ? "twice" : `${n} times`)));
        const gap = due && due.visits > 1 ? el("select", { "aria-label": `Days between visits to ${c.name}`, class: "due-gap",
          onchange: (e) => state.due.set(c.id, { ...state.due.get(c.id), gap: Number(e.target.value) }) },
        ...[1, 2, 3, 4].map((n) => el("option", { value: n, selected: due.gap === n }, `${n}+ day${n > 1 ? "s" : ""} apart`))) : null;
        const closed = WEEKDAYS.filter((w) => c.windows[w] === "closed").map((w) => w[0].toUpperCase() + w.slice(1, 3));
        return el("li", { class: "due-row" },
          el("label", { class: "choice" },
            el("input", { type: "checkbox", value: c.id, checked: Boolean(due),
              onchange: (e) => { if (e.target.checked) state.due.set(c.id, { visits: 1, gap: 1 }); else state.due.delete(c.id); renderDue(); } }),
            el("span", {}, c.name, el("br"), el("span", { class: "hint" },
              `${c.visit_min} min${closed.length ? ` \u00b7 closed ${closed.join(", ")}` : ""}`))),
          due ? el("div", { class: "due-how" }, visits, gap) : null);
      });
    $("due-list").replaceChildren(...rows);
    $("due-count").textContent = `${state.due.size} of ${state.clients.length} active clients ticked.`;
  }

  $("due-search").addEventListener("input", renderDue);
  $("due-all").addEventListener("click", () => {
    for (const c of state.clients) if (!state.due.has(c.id)) state.due.set(c.id, { visits: 1, gap: 1 });
    renderDue();
  });
  $("due-none").addEventListener("click", () => { state.due.clear(); renderDue(); });
  for (const box of document.querySelectorAll('input[name="day"]')) box.addEventListener("change", renderDue);

  function requestBody() {
    const body = { days: workingDays(), clients: [] };
    const cap = Rondo.numberOrRaw($("max-visits").value);
    if (cap !== null) body.max_visits = cap;
    const hours = Rondo.numberOrRaw($("max-work").value);
    if (hours !== null) body.max_work_min = typeof hours === "number" ? Math.round(hours * 60) : hours;
    for (const [id, due] of state.due) {
      const entry = { client_id: id };
      if (due.visits > 1) { entry.visits = due.visits; entry.min_gap_days = due.gap; }
      body.clients.push(entry);
    }
    // Pins stay: the rep put those clients on their day by hand.
    const pins = {};
    for (const c of (state.view && state.view.planned ? state.view.spec.clients : [])) {
      if (c.pin && state.due.has(c.client_id) && body.days.includes(c.pin)) pins[c.client_id] = c.pin;
    }
    if (Object.keys(pins).length) body.pins = pins;
    return body;
  }

  /* ---- rendering the week ---- */

  function render(view) {
    state.view = view;
    const planned = view.planned && view.days.length > 0;
    $("week-summary").hidden = !planned;
    $("caller").hidden = !planned;
    $("map-card").hidden = !planned;
    $("solve-button").textContent = view.planned ? "Plan the week again" : "Spread over the week";
    if (!planned) {
      $("day-cards").replaceChildren();
      return;
    }
    renderSummary(view);
    $("day-cards").replaceChildren(...view.days.map(dayCard));
    renderCaller(view);
    const frame = $("week-map");
    frame.src = `${view.map_url}?shown=${Date.now()}`;
  }

  function renderSummary(view) {
    const proof = $("week-proof");
    proof.textContent = view.proof.text;
    proof.className = `proof ${view.proof.proven_optimal ? "proven" : "unproven"}`;
    $("week-changed").hidden = !view.proof.changed_text;
    $("week-changed").textContent = view.proof.changed_text || "";
    const total = (label, value, id) => el("div", {}, el("dt", {}, label), el("dd", { id }, value));
    const used = view.days.filter((d) => d.visits > 0).length;
    $("week-totals").replaceChildren(
      total("Driving", km(view.totals.km), "week-km"),
      total("At the wheel", minutes(view.totals.drive_min), "week-drive"),
      total("Visits", String(view.totals.visits), "week-visits"),
      total("Days out", `${used} of ${view.days.length}`, "week-days-out"));
    const missing = view.unplaced;
    $("week-unplaced").hidden = missing.length === 0;
    $("week-unplaced").textContent = missing.length
      ? `Not on any day yet: ${missing.map((m) => m.name).join(", ")}. Plan the week again, or price them below.` : "";
  }

  function swatch(day) {
    const box = svg("svg", { class: "day-swatch", viewBox: "0 0 44 14", width: 44, height: 14, "aria-hidden": "true" });
    const line = svg("line", { x1: 2, y1: 7, x2: 42, y2: 7, stroke: day.colour, "stroke-width": 4, "stroke-linecap": "butt" });
    if (day.dash) line.setAttribute("stroke-dasharray", day.dash.replace(/ /g, ","));
    box.append(line);
    return box;
  }

  function dayCard(day) {
    const stat = (label, value) => el("div", {}, el("dt", {}, label), el("dd", {}, value));
    const head = el("div", { class: "day-head" }, swatch(day), el("h2", {}, `${day.name} ${shortDate(day.date)}`));
    const open = el("a", { class: "button secondary open-day", href: `/day?date=${encodeURIComponent(day.date)}`,
      "aria-label": `Open ${day.name} in the day screen` }, `Open ${day.name}`);
    const parts = [head];
    if (day.visits === 0) {
      parts.push(el("p", { class: "hint free-day" }, "Free day: no visits."));
    } else {
      if (day.feasible && day.solved) {
        parts.push(el("dl", { class: "totals" },
          stat("Visits", String(day.visits)), stat("Driving", km(day.km)),
          stat("At the wheel", minutes(day.drive_min)), stat("Back home", day.return)));
      }
      const proof = el("p", { class: `proof small ${day.proven ? "proven" : "unproven"}` },
        day.proof || "Not worked out yet: open the day to plan it.");
      parts.push(proof);
      if (day.stale) parts.push(el("p", { class: "warn" }, "The visits changed on the day screen since this order was worked out."));
      if (day.started) parts.push(el("p", { class: "hint" }, "Visits are done on this day: it stays as it is."));
      parts.push(el("ol", { class: "week-visits" }, ...day.clients.map((c) => visitRow(day, c))));
    }
    parts.push(open);
    return el("section", { class: "card day-card", dataset: { weekday: day.weekday }, "aria-label": `${day.name} ${day.date}` }, ...parts);
  }

  function visitRow(day, c) {
    const fixed = day.started || c.done;
    return el("li", { dataset: { clientId: c.client_id } },
      el("span", { class: "who" }, c.name,
        c.pinned ? el("span", { class: "tag pin" }, "pinned") : null,
        c.done ? el("span", { class: "tag done" }, "done") : null),
      fixed ? null : el("span", { class: "acts" },
        c.due ? el("button", { type: "button", class: "button small secondary", "aria-pressed": c.pinned ? "true" : "false",
          "aria-label": c.pinned ? `Unpin ${c.name} from ${day.name}` : `Pin ${c.name} to ${day.name}`,
          onclick: () => pin(c, c.pinned ? null : day.weekday) }, c.pinned ? "Unpin" : "Pin") : null,
        el("button", { type: "button", class: "button small", "aria-label": `Move ${c.name} to another day`,
          onclick: () => openMove(day, c) }, "Move")));
  }

  /* ---- a client calling: which day costs least ---- */

  function renderCaller(view) {
    const on = new Map();
    for (const d of view.days) for (const c of d.clients) on.set(c.client_id, [...(on.get(c.client_id) || []), d.name.slice(0, 3)]);
    const select = $("caller-client");
    const keep = select.value;
    select.replaceChildren(...state.clients.map((c) => el("option", { value: c.id },
      on.has(c.id) ? `${c.name} (on ${on.get(c.id).join(", ")})` : c.name)));
    if (keep && [...select.options].some((o) => o.value === keep)) select.value = keep;
  }

  function quoteText(q, moving) {
    const when = `${q.name} ${shortDate(q.date)}`;
    if (!q.fits) return [when, `no, ${q.reason}`];
    const back = `home by ${q.return}`;
    if (moving) {
      const saved = q.extra_km - q.net_km;
      return [when, `${signed(km(q.net_km), q.net_km)} for the week`,
        `${q.name} ${signed(km(q.extra_km), q.extra_km)}, ${moving} saves ${km(saved)} \u00b7 ${back}`];
    }
    return [when, `${signed(km(q.extra_km), q.extra_km)} driving`, back];
  }

  function quoteList(list, answer, moving, onPick, pickLabel, ariaLabel) {
    list.replaceChildren(...answer.quotes.map((q) => {
      const [when, cost, detail] = quoteText(q, moving);
      return el("li", { class: q.fits ? "fits" : "no-fit", dataset: { weekday: q.weekday } },
        el("div", { class: "q-text" }, el("strong", {}, `${when}: `), cost,
          detail ? el("div", { class: "hint" }, detail) : null,
          q.fits && q.proven_optimal === false ? el("div", { class: "hint" }, "(best found, not proven)") : null),
        q.fits ? el("button", { type: "button", class: "button small", "aria-label": `${ariaLabel} ${q.name}`,
          onclick: () => onPick(q) }, pickLabel) : null);
    }));
  }

  $("caller-quote").addEventListener("click", async () => {
    $("caller-answer").hidden = true;
    const id = Number($("caller-client").value);
    const job = await start("/quote", { client_id: id }, $("caller"), "Pricing each day of the week\u2026");
    if (!job) return;
    const answer = job.result;
    $("caller-answer").hidden = false;
    const best = answer.quotes.find((q) => q.fits);
    $("caller-title").textContent = best
      ? `${answer.name}: cheapest on ${best.name} ${shortDate(best.date)}.`
      : `${answer.name} fits on no remaining day of this week.`;
    const moving = answer.from ? dayName(answer.from) : null;
    quoteList($("caller-list"), answer, moving, (q) => book(answer, q), "Book", "Book it on");
  });

  function dayName(weekday) {
    const day = state.view.days.find((d) => d.weekday === weekday);
    return day ? day.name : weekday;
  }

  async function book(answer, q) {
    const body = { client_id: answer.client_id, to: q.weekday };
    if (answer.from) body.from = answer.from;
    const job = await start("/move", body, $("caller"), `Putting ${answer.name} on ${q.name}\u2026`);
    if (job) {
      $("caller-answer").hidden = true;
      toast(`${answer.name} is on ${q.name} ${shortDate(q.date)}.`);
    }
  }

  /* ---- moving a visit: its cost first, then the move ---- */

  const dialog = $("move-dialog");

  async function openMove(day, c) {
    state.moving = { day, client: c };
    $("move-title").textContent = `Move ${c.name} from ${day.name}`;
    $("move-list").replaceChildren();
    $("move-wait").hidden = false;
    // Only a client seen once a week can be pinned to a day.
    const due = state.view.spec.clients.find((d) => d.client_id === c.client_id);
    const pinnable = !due || due.visits === 1;
    $("move-pin").checked = pinnable;
    $("move-pin").disabled = !pinnable;
    dialog.showModal();
    let job;
    try {
      job = await api("POST", weekPath("/quote"), { client_id: c.client_id, from: day.weekday });
    } catch (err) {
      dialog.close();
      toast(err.message, true);
      return;
    }
    const done = await follow(job, () => {}).done.catch((err) => { toast(err.message, true); return null; });
    if (!done || state.moving === null || state.moving.client !== c) return;
    $("move-wait").hidden = true;
    if (done.state !== "done") {
      $("move-wait").hidden = false;
      $("move-wait").textContent = (done.error && done.error.message) || "The costs could not be worked out.";
      return;
    }
    const answer = done.result;
    quoteList($("move-list"), { ...answer, quotes: answer.quotes.filter((q) => q.weekday !== day.weekday) },
      day.name, (q) => doMove(answer, q), "Move here", "Move it to");
  }

  async function doMove(answer, q) {
    const body = { client_id: answer.client_id, from: answer.from, to: q.weekday };
    if (!$("move-pin").disabled) body.pin = $("move-pin").checked;
    dialog.close();
    const job = await start("/move", body, $("day-cards"), `Moving ${answer.name} to ${q.name}\u2026`);
    if (job) toast(`${answer.name} moved to ${q.name} ${shortDate(q.date)}.`);
  }

  dialog.addEventListener("close", () => { state.moving = null; $("move-wait").textContent = "Working out what each day would cost\u2026"; });

  async function pin(c, weekday) {
    try {
      render({ ...(await api("PUT", weekPath("/pins"), { client_id: c.client_id, day: weekday })) });
      toast(weekday ? `${c.name} stays on ${dayName(weekday)} when the week is planned again.` : `${c.name} is free to move again.`);
    } catch (err) {
      toast(err.message, true);
    }
  }

  /* ---- jobs ---- */

  function watch(job, title) {
    return watchJob(job, { state, title: title || "Spreading the visits over the week\u2026",
      failText: "The laptop could not work it out." }).then((j) => {
      if (j && j.kind !== "week-quote") render(j.result);
      return j;
    });
  }

  async function start(path, body, scope, title) {
    if (state.running) await state.running.stop();
    try {
      const job = await api("POST", weekPath(path), body);
      clearErrors(scope);
      return await watch(job, title);
    } catch (err) {
      showErrors(scope, err);
      return null;
    }
  }

  $("solve-button").addEventListener("click", async () => {
    const form = $("week-form");
    const job = await start("/solve", requestBody(), form);
    if (job) {
      $("setup-box").open = false;
      toast("The week is planned.");
    } else if (form.querySelector(".field-error:not(:empty)")) {
      $("setup-box").open = true;
    }
  });

  /* ---- start ---- */

  if (!dateInput.value) dateInput.value = Rondo.todayISO();
  dateInput.value = mondayOf(dateInput.value);
  dateInput.addEventListener("change", () => {
    if (!dateInput.value) return;
    dateInput.value = mondayOf(dateInput.value);
    const url = new URL(window.location.href);
    url.searchParams.set("week", dateInput.value);
    window.history.replaceState(null, "", url);
    $("caller-answer").hidden = true;
    loadWeek().catch((err) => toast(err.message, true));
  });
  loadAll().catch((err) => toast(err.message, true));
})();
