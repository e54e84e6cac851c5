/* Day screen: choose the visits, have the laptop work out the order, follow it on the road. */
"use strict";

(() => {
  const { api, el, toast, showErrors, clearErrors, watchJob, echoLocation, todayISO, nowHHMM,
    km, minutes, signed } = Rondo;
  const $ = (id) => document.getElementById(id);
  const dateInput = $("day-date");
  const state = { settings: null, clients: [], view: null, running: null };

  function dayPath(suffix) { return `/api/days/${encodeURIComponent(dateInput.value)}${suffix || ""}`; }

  /* ---- loading ---- */

  async function loadAll() {
    const [settings, clients] = await Promise.all([api("GET", "/api/settings"),
      api("GET", "/api/clients?active=true")]);
    state.settings = settings;
    state.clients = clients;
    $("break-row").hidden = !settings.break_min;
    await loadDay();
  }

  async function loadDay() {
    if (!dateInput.value) return;
    const weekday = new Date(`${dateInput.value}T12:00:00`).toLocaleDateString(undefined, { weekday: "long" });
    $("day-weekday").textContent = weekday;
    const view = await api("GET", dayPath());
    render(view);
    if (view.job && !state.running) watch(view.job);
  }

  /* ---- rendering ---- */

  function render(view) {
    state.view = view;
    renderChoices(view);
    renderPlan(view);
    renderDone(view);
    renderRoad(view);
    const started = view.done.length > 0;
    $("solve-button").hidden = started;
    $("replan-button").hidden = !(started || (view.plan && view.plan.feasible));
    $("solve-button").disabled = view.choices.length === 0;
  }

  function renderChoices(view) {
    const list = $("chosen-list");
    $("chosen-empty").hidden = view.choices.length > 0;
    list.replaceChildren(...view.choices.map((c) => el("li", {},
      el("span", {}, c.name,
        c.added_late ? el("span", { class: "tag late" }, "added") : null,
        c.done ? el("span", { class: "tag done" }, "done") : null,
        c.closed ? el("span", { class: "tag off" }, "closed") : null),
      c.done ? null : el("button", { type: "button", class: "button small secondary",
        "aria-label": `Take ${c.name} off this day`, onclick: () => removeChoice(c.client_id) }, "Remove"))));
    renderPicker();
  }

  function renderPicker() {
    const chosen = new Set(state.view.choices.map((c) => c.client_id));
    const needle = $("picker-search").value.trim().toLowerCase();
    const weekday = ["mon", "tue", "wed", "thu", "fri", "sat", "sun"][(new Date(`${dateInput.value}T12:00:00`).getDay() + 6) % 7];
    const rows = state.clients
      .filter((c) => !needle || c.name.toLowerCase().includes(needle) || c.notes.toLowerCase().includes(needle))
      .map((c) => {
        const hours = c.windows[weekday];
        const closed = hours === "closed";
        return el("li", { class: closed ? "closed" : "" },
          el("label", { class: "choice" },
            el("input", { type: "checkbox", value: c.id, checked: chosen.has(c.id), disabled: closed && !chosen.has(c.id) }),
            el("span", {}, c.name, el("br"), el("span", { class: "hint" }, `${c.visit_min} min \u00b7 ${closed ? "closed that day" : hours || "any time"}`))));
      });
    $("picker-list").replaceChildren(...rows);
  }

  function proofLine(plan) {
    const p = $("proof");
    p.textContent = plan.proof.text;
    p.className = `proof ${plan.proof.proven_optimal ? "proven" : "unproven"}`;
  }

  function renderPlan(view) {
    const plan = view.plan;
    $("plan").hidden = !plan;
    if (!plan) return;
    $("stale").hidden = !plan.stale;
    $("infeasible").hidden = plan.feasible;
    const stops = $("stops");
    if (!plan.feasible) {
      const why = plan.explanation || {};
      $("infeasible-text").textContent = why.summary || "No order keeps every time window.";
      const items = (why.move_to_another_day || []).length
        ? [el("li", {}, `Move to another day: ${why.move_to_another_day.join(", ")}`)] : [];
      $("infeasible-list").replaceChildren(...items);
      $("proof").textContent = "";
      $("totals").replaceChildren();
      stops.replaceChildren();
      $("timeline").replaceChildren();
      renderMap(null);
      $("export-slot").hidden = true;
      return;
    }
    proofLine(plan);
    renderMap(plan);
    $("export-slot").hidden = false;
    const placed = new Map(view.choices.map((c) => [c.client_id, c]));
    const t = plan.totals;
    const total = (label, value, id) => el("div", {}, el("dt", {}, label), el("dd", { id }, value));
    $("totals").replaceChildren(
      total("Driving", km(t.km), "total-km"),
      total("At the wheel", minutes(t.drive_min), "total-drive"),
      total("Waiting", minutes(t.wait_min), "total-wait"),
      total("Back home", plan.return, "total-return"));

    const doneIds = new Set(view.done.map((d) => d.client_id));
    const rows = [el("li", {}, el("div", { class: "head" }, el("span", { class: "num home-mark" }, "\u25b6"),
      el("div", { class: "body" }, el("div", { class: "name" }, `Leave ${plan.start.label}`),
        el("div", { class: "times" }, plan.leave && plan.leave !== plan.start.clock
          ? `${plan.leave} (free from ${plan.start.clock}; leaving later only saves waiting)`
          : plan.start.clock))))];
    for (const v of plan.visits) {
      const done = doneIds.has(v.client_id);
      const waits = [];
      if (v.wait_min >= 0.5) waits.push(`wait ${minutes(v.wait_min)}`);
      if (v.break) waits.push(`break ${v.break.start}\u2013${v.break.end}`);
      rows.push(el("li", { class: done ? "is-done" : "", dataset: { clientId: v.client_id } },
        el("div", { class: `leg${v.leg_entered ? " entered" : ""}` }, `\u2193 ${km(v.leg_km)} \u00b7 ${minutes(v.leg_min)}`),
        el("div", { class: "head" },
          el("span", { class: "num" }, v.seq),
          el("div", { class: "body" },
            el("div", { class: "name" }, v.name),
            el("div", { class: "times" }, `${v.arrive} arrive \u00b7 ${v.start}\u2013${v.depart} visit`),
            waits.length ? el("div", { class: "waits" }, waits.join(" \u00b7 ")) : null,
            el("div", { class: "win" }, v.windows ? `may start ${v.windows}` : "any time"),
            placed.has(v.client_id) ? navLink(placed.get(v.client_id), v.name) : null),
          done ? null : el("button", { type: "button", class: "button small done-btn",
            "aria-label": `Mark ${v.name} done`, onclick: () => openDone(v) }, "Done"))));
    }
    rows.push(el("li", {},
      el("div", { class: `leg${plan.return_leg_entered ? " entered" : ""}` }, `\u2193 ${km(plan.return_leg_km)} \u00b7 ${minutes(plan.return_leg_min)}`),
      el("div", { class: "head" }, el("span", { class: "num home-mark" }, "\u25a0"),
        el("div", { class: "body" }, el("div", { class: "name" }, `Back at ${state.settings.home_label}`),
          el("div", { class: "times" }, `${plan.return} (home by ${plan.day_end})`),
          state.settings.home ? navLink(state.settings.home, state.settings.home_label) : null))));
    stops.replaceChildren(...rows);
    RondoTimeline.draw($("timeline"), plan, state.settings.day_start);
  }

  /* RFC 5870 geo: URI, at most 6 decimals (about 0.1 m), trailing zeros dropped. */
  function geoUri(lat, lon) {
    const part = (x) => { const t = x.toFixed(6).replace(/\.?0+$/, ""); return t === "-0" ? "0" : t; };
    return `geo:${part(lat)},${part(lon)}`;
  }

  /* Hands the stop to the phone's own maps or navigation app. */
  function navLink(where, name) {
    return el("a", { class: "button small secondary nav-link", href: geoUri(where.lat, where.lon),
      "aria-label": `Open ${name} in your maps app` }, "Open in maps app");
  }

  /* The map page of the latest plan; a new solve id means a new loop to draw. */
  function renderMap(plan) {
    const frame = $("day-map");
    $("map-slot").hidden = !plan;
    if (!plan) {
      if (frame.getAttribute("src")) frame.removeAttribute("src");
      return;
    }
    const src = `/days/${encodeURIComponent(dateInput.value)}/map?solve=${encodeURIComponent(plan.solve_id)}`;
    if (frame.getAttribute("src") !== src) frame.setAttribute("src", src);
  }

  /* ---- files to take along ---- */

  function mondayOf(iso) {
    const d = new Date(`${iso}T12:00:00`);
    d.setDate(d.getDate() - ((d.getDay() + 6) % 7));
    const pad = (n) => String(n).padStart(2, "0");
    return `${d.getFullYear()}-${pad(d.getMonth() + 1)}-${pad(d.getDate())}`;
  }

  function exportUrl(kind) {
    const query = new URLSearchParams();
    if (kind === "ics" || kind === "week") {
      if ($("export-travel").checked) query.set("travel", "1");
      if ($("export-alarm").value) query.set("alarm", $("export-alarm").value);
    }
    const path = kind === "week" ? `/api/weeks/${encodeURIComponent(mondayOf(dateInput.value))}/export.ics`
      : dayPath(`/export.${kind}`);
    return query.toString() ? `${path}?${query}` : path;
  }

  function fileName(response, fallback) {
    const match = /filename="([^"]+)"/.exec(response.headers.get("Content-Disposition") || "");
    return match ? match[1] : fallback;
  }

  async function takeAlong(kind) {
    const scope = $("export-slot");
    clearErrors(scope);
    let response;
    try {
      response = await fetch(exportUrl(kind), { headers: { Accept: "*/*" } });
    } catch (err) {
      toast("The laptop does not answer. Is Rondo running there?", true);
      return;
    }
    if (!response.ok) {
      let body = {};
      try { body = await response.json(); } catch (err) { /* not JSON */ }
      showErrors(scope, new Rondo.ApiError(response.status, body));
      return;
    }
    const blob = await response.blob();
    const name = fileName(response, `rondo-${dateInput.value}.${kind === "week" ? "ics" : kind}`);
    const file = new File([blob], name, { type: blob.type });
    // Web Share Level 2: only share what the browser says it can share as a file.
    if (navigator.canShare && navigator.share && navigator.canShare({ files: [file] })) {
      try {
        await navigator.share({ files: [file], title: name });
        return;
      } catch (err) {
        if (err.name === "AbortError") return;
      }
    }
    const href = URL.createObjectURL(file);
    const link = el("a", { href, download: name, hidden: true });
    document.body.append(link);
    link.click();
    link.remove();
    setTimeout(() => URL.revokeObjectURL(href), 60000);
    toast(`Saved ${name}.`);
  }

  for (const button of document.querySelectorAll("[data-export]")) {
    button.addEventListener("click", () => takeAlong(button.dataset.export));
  }

  function renderDone(view) {
    $("done-card").hidden = view.done.length === 0;
    $("done-list").replaceChildren(...view.done.map((d) => el("li", {},
      el("span", {}, el("strong", {}, d.name), el("br"), `${d.arrived}\u2013${d.departed}`),
      el("button", { type: "button", class: "button small secondary", "aria-label": `Undo ${d.name}`,
        onclick: () => undoDone(d.client_id) }, "Undo"))));
  }

  function renderRoad(view) {
    $("road").hidden = !view.plan && view.done.length === 0;
    const chosen = new Set(view.choices.map((c) => c.client_id));
    const done = [...view.done].sort((a, b) => b.departed_min - a.departed_min);
    const whereClient = $("where-client");
    const previous = whereClient.value;
    const doneIds = new Set(done.map((d) => d.client_id));
    whereClient.replaceChildren(
      ...done.map((d) => el("option", { value: d.client_id }, `${d.name} (done)`)),
      ...state.clients.filter((c) => !chosen.has(c.id)).map((c) => el("option", { value: c.id }, c.name)));
    if (previous && [...whereClient.options].some((o) => o.value === previous)) whereClient.value = previous;
    if (!document.querySelector('input[name="where"]:checked') || !done.length) {
      const fallback = done.length ? "client" : (navigator.geolocation ? "gps" : "home");
      document.querySelector(`input[name="where"][value="${fallback}"]`).checked = true;
    }
    if (!$("now").value) $("now").value = nowHHMM();
    const extra = $("extra-client");
    const keep = extra.value;
    extra.replaceChildren(...state.clients.filter((c) => !chosen.has(c.id) && !doneIds.has(c.id))
      .map((c) => el("option", { value: c.id }, c.name)));
    if (keep && [...extra.options].some((o) => o.value === keep)) extra.value = keep;
  }

  /* ---- choosing ---- */

  async function saveChoices(ids) {
    try {
      render(await api("PUT", dayPath("/visits"), { client_ids: ids }));
    } catch (err) {
      showErrors($("choose"), err);
    }
  }

  function removeChoice(id) {
    saveChoices(state.view.choices.map((c) => c.client_id).filter((c) => c !== id));
  }

  $("picker-save").addEventListener("click", async () => {
    const ids = [...$("picker-list").querySelectorAll("input:checked")].map((i) => Number(i.value));
    // Keep chosen clients hidden by the search filter.
    const shown = new Set([...$("picker-list").querySelectorAll("input")].map((i) => Number(i.value)));
    const hidden = state.view.choices.map((c) => c.client_id).filter((id) => !shown.has(id));
    await saveChoices([...hidden, ...ids]);
    $("picker").open = false;
  });
  $("picker-search").addEventListener("input", renderPicker);

  /* ---- jobs ---- */

  function watch(job) {
    const title = job.kind === "quote" ? "Pricing the extra visit\u2026" : "Working out the order\u2026";
    return watchJob(job, { state, title, failText: "The solve failed." }).then((j) => {
      if (j) {
        if (j.kind === "quote") showQuote(j.result);
        else render(j.result);
      }
      return j;
    });
  }

  async function start(path, body, scope) {
    if (state.running) await state.running.stop();
    try {
      const job = await api("POST", dayPath(path), body);
      clearErrors(scope);
      return watch(job);
    } catch (err) {
      showErrors(scope, err);
      return null;
    }
  }

  $("solve-button").addEventListener("click", () => start("/solve", undefined, $("choose")));

  /* ---- on the road ---- */

  function position() {
    return new Promise((resolve, reject) => {
      if (!navigator.geolocation) { reject(new Error("This browser gives no position; type it or pick a client.")); return; }
      navigator.geolocation.getCurrentPosition(
        (p) => resolve({ lat: p.coords.latitude, lon: p.coords.longitude }),
        () => reject(new Error("The phone gave no position; type it or pick a client.")),
        { enableHighAccuracy: false, timeout: 10000, maximumAge: 60000 });
    });
  }

  async function whereBody() {
    const where = document.querySelector('input[name="where"]:checked').value;
    let from = "home";
    if (where === "gps") from = await position();
    else if (where === "client") from = Number($("where-client").value);
    else if (where === "typed") from = $("where-typed").value;
    const body = { from, now: $("now").value };
    if (state.settings.break_min) body.break_taken = $("break-taken").checked;
    return body;
  }

  async function replan() {
    try {
      const body = await whereBody();
      await start("/replan", body, $("road"));
    } catch (err) {
      toast(err.message, true);
    }
  }
  $("replan-button").addEventListener("click", replan);
  echoLocation($("where-typed"), $("where-echo"));
  $("where-typed").addEventListener("focus", () => { document.querySelector('input[name="where"][value="typed"]').checked = true; });
  $("where-client").addEventListener("change", () => { document.querySelector('input[name="where"][value="client"]').checked = true; });

  function later(extraMin) {
    if (Math.abs(extraMin) < 0.5) return "no later";
    return extraMin > 0 ? `${minutes(extraMin)} later` : `${minutes(-extraMin)} earlier`;
  }

  function showQuote(q) {
    const box = $("quote");
    box.hidden = false;
    const name = q.name || "This visit";
    if (!q.fits_now) {
      $("quote-estimate").textContent = "";
      $("quote-exact").textContent = (q.explanation && q.explanation.summary) || "The rest of the day does not fit as it stands.";
      $("quote-moves").textContent = "";
      $("quote-add").hidden = true;
      return;
    }
    $("quote-estimate").textContent = q.estimate
      ? `Quick estimate: ${signed(km(q.estimate.extra_km), q.estimate.extra_km)}, home ${later(q.estimate.extra_min)} (${q.estimate.return}).`
      : "Quick estimate: no place in the current order keeps every window.";
    if (q.exact.fits) {
      const proven = q.exact.proven_optimal ? "proven" : "best found";
      $("quote-exact").textContent = `${name}: ${signed(km(q.exact.extra_km), q.exact.extra_km)}, home at ${q.exact.return} ` +
        `(${later(q.exact.extra_min)}), ${proven}. Still home by ${state.settings.day_end}.`;
      $("quote-moves").textContent = q.exact.moved.length ? `Visits that move: ${q.exact.moved.join(", ")}.` : "No other visit moves.";
      $("quote-add").hidden = false;
    } else {
      const why = q.exact.explanation || {};
      $("quote-exact").textContent = `${name} does not fit today. ${why.summary || ""}`;
      $("quote-moves").textContent = "";
      $("quote-add").hidden = true;
    }
    box.dataset.clientId = $("extra-client").value;
  }

  $("quote-button").addEventListener("click", async () => {
    $("quote").hidden = true;
    try {
      const body = await whereBody();
      body.client_id = Number($("extra-client").value);
      await start("/quote", body, $("road"));
    } catch (err) {
      toast(err.message, true);
    }
  });

  $("quote-add").addEventListener("click", async () => {
    try {
      await api("POST", dayPath("/visits"), { client_id: Number($("quote").dataset.clientId), late: true });
      $("quote").hidden = true;
      await replan();
    } catch (err) {
      showErrors($("road"), err);
    }
  });

  /* ---- done marks ---- */

  const dialog = $("done-dialog");
  let doneVisit = null;
  function openDone(visit) {
    doneVisit = visit;
    const form = $("done-form");
    clearErrors(form);
    $("done-title").textContent = `${visit.name}: visit done`;
    form.elements.arrived.value = visit.start;
    form.elements.departed.value = visit.depart;
    dialog.showModal();
  }
  $("done-form").addEventListener("submit", async (event) => {
    if (event.submitter && event.submitter.value === "cancel") return;
    event.preventDefault();
    const form = $("done-form");
    try {
      const view = await api("PUT", dayPath(`/done/${doneVisit.client_id}`),
        { arrived: form.elements.arrived.value, departed: form.elements.departed.value });
      dialog.close();
      render(view);
      const here = $("where-client");
      here.value = String(doneVisit.client_id);
      document.querySelector('input[name="where"][value="client"]').checked = true;
      $("now").value = form.elements.departed.value;
      toast(`${doneVisit.name} marked done.`);
    } catch (err) {
      showErrors(form, err);
    }
  });

  async function undoDone(id) {
    try { render(await api("DELETE", dayPath(`/done/${id}`))); } catch (err) { toast(err.message, true); }
  }

  /* ---- start ---- */

  if (!dateInput.value) dateInput.value = todayISO();
  dateInput.addEventListener("change", () => {
    const url = new URL(window.location.href);
    url.searchParams.set("date", dateInput.value);
    window.history.replaceState(null, "", url);
    $("quote").hidden = true;
    loadDay().catch((err) => toast(err.message, true));
  });
  loadAll().catch((err) => toast(err.message, true));
})();
