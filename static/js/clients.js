/* Client book: search, add, edit, deactivate, CSV in and out. */
"use strict";

(() => {
  const { api, el, toast, showErrors, clearErrors, echoLocation, numberOrRaw } = Rondo;
  const DAYS = ["mon", "tue", "wed", "thu", "fri", "sat", "sun"];
  const list = document.getElementById("client-list");
  const search = document.getElementById("client-search");
  const showInactive = document.getElementById("show-inactive");
  const editor = document.getElementById("client-editor");
  const form = document.getElementById("client-form");
  const toggle = document.getElementById("client-toggle");
  const checkLocation = echoLocation(form.elements.location, document.getElementById("location-echo"));
  let editing = null;

  function todayKey() { return DAYS[(new Date().getDay() + 6) % 7]; }

  async function load() {
    const params = new URLSearchParams();
    if (search.value.trim()) params.set("q", search.value.trim());
    if (!showInactive.checked) params.set("active", "true");
    const clients = await api("GET", `/api/clients?${params}`);
    document.getElementById("client-count").textContent =
      clients.length === 1 ? "1 client" : `${clients.length} clients`;
    const today = todayKey();
    list.replaceChildren(...clients.map((c) => {
      const hours = c.windows[today] || "any time";
      return el("li", { class: c.active ? "" : "inactive", dataset: { id: c.id } },
        el("span", {},
          el("span", { class: "who" }, c.name), c.active ? null : el("span", { class: "tag off" }, "off"),
          el("br"),
          el("span", { class: "meta" }, `${c.visit_min} min \u00b7 today ${hours}`)),
        el("button", { type: "button", class: "button small secondary", onclick: () => open(c),
          "aria-label": `Edit ${c.name}` }, "Edit"));
    }));
  }

  function open(client) {
    editing = client;
    clearErrors(form);
    form.reset();
    document.getElementById("editor-title").textContent = client ? "Edit client" : "New client";
    document.getElementById("location-echo").textContent = "";
    if (client) {
      form.elements.name.value = client.name;
      form.elements.location.value = client.location.text;
      form.elements.visit_min.value = client.visit_min;
      form.elements.notes.value = client.notes;
      for (const d of DAYS) form.elements[`windows.${d}`].value = client.windows[d];
      checkLocation();
    } else {
      form.elements.visit_min.value = 30;
    }
    toggle.hidden = !client;
    toggle.textContent = client && !client.active ? "Reactivate" : "Deactivate";
    document.getElementById("inactive-note").hidden = !client || client.active;
    editor.hidden = false;
    showBar(true);
    editor.scrollIntoView({ block: "start" });
    form.elements.name.focus();
  }

  function showBar(editingNow) {
    document.getElementById("new-client").hidden = editingNow;
    document.getElementById("client-save-bar").hidden = !editingNow;
  }

  function close() { editor.hidden = true; editing = null; showBar(false); }

  form.addEventListener("submit", async (event) => {
    event.preventDefault();
    const windows = {};
    for (const d of DAYS) windows[d] = form.elements[`windows.${d}`].value;
    const body = {
      name: form.elements.name.value,
      location: form.elements.location.value,
      visit_min: numberOrRaw(form.elements.visit_min.value),
      windows,
      notes: form.elements.notes.value,
    };
    try {
      const saved = editing
        ? await api("PUT", `/api/clients/${editing.id}`, body)
        : await api("POST", "/api/clients", body);
      toast(`Saved ${saved.name}.`);
      close();
      await load();
    } catch (err) {
      showErrors(form, err);
      // The field's own message says it now; the live echo would repeat it.
      if ((err.body.fields || []).some((f) => f.field === "location")) {
        document.getElementById("location-echo").textContent = "";
      }
    }
  });

  toggle.addEventListener("click", async () => {
    if (!editing) return;
    try {
      const saved = await api("PUT", `/api/clients/${editing.id}`, { active: !editing.active });
      toast(saved.active ? `${saved.name} is back in planning.` : `${saved.name} is left out of planning.`);
      close();
      await load();
    } catch (err) {
      showErrors(form, err);
    }
  });

  document.getElementById("copy-monday").addEventListener("click", () => {
    for (const d of ["tue", "wed", "thu", "fri"]) form.elements[`windows.${d}`].value = form.elements["windows.mon"].value;
  });
  document.getElementById("client-close").addEventListener("click", close);
  document.getElementById("new-client").addEventListener("click", () => open(null));
  let searchTimer = null;
  search.addEventListener("input", () => { clearTimeout(searchTimer); searchTimer = setTimeout(load, 250); });
  showInactive.addEventListener("change", load);

  document.getElementById("import-file").addEventListener("change", async (event) => {
    const file = event.target.files[0];
    const out = document.getElementById("import-errors");
    out.replaceChildren();
    if (!file) return;
    const data = new FormData();
    data.append("file", file);
    try {
      const response = await fetch("/api/clients/import", { method: "POST", body: data });
      const body = await response.json();
      if (!response.ok) {
        out.replaceChildren(...(body.fields || [{ message: body.message }]).map((f) => el("li", {}, f.message)));
        toast("Nothing was imported: fix the lines listed.", true);
      } else {
        toast(`Imported: ${body.created} new, ${body.updated} updated.`);
        await load();
      }
    } catch (err) {
      toast("The laptop does not answer.", true);
    }
    event.target.value = "";
  });

  load().catch((err) => toast(err.message, true));
})();
