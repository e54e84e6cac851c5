/* Measured drives: the rep's own km and minutes for a pair of places. */
"use strict";

(() => {
  const { api, el, toast, showErrors, clearErrors, km, minutes, numberOrRaw } = Rondo;
  const form = document.getElementById("drive-form");
  const list = document.getElementById("drive-list");

  function placeOptions(select, places) {
    select.replaceChildren(...places.map((p) => el("option", { value: p.value }, p.label)));
  }

  async function loadPlaces() {
    const [settings, clients] = await Promise.all([api("GET", "/api/settings"),
      api("GET", "/api/clients?active=true")]);
    const homeName = settings.home_label.toLowerCase() === "home" ? settings.home_label
      : `${settings.home_label} (home)`;
    const places = [{ value: "home", label: homeName },
      ...clients.map((c) => ({ value: String(c.id), label: c.name }))];
    placeOptions(form.elements.from, places);
    placeOptions(form.elements.to, places);
    if (places.length > 1) form.elements.to.selectedIndex = 1;
  }

  async function loadList() {
    const drives = await api("GET", "/api/drives");
    document.getElementById("drive-empty").hidden = drives.length > 0;
    list.replaceChildren(...drives.map((d) => el("li", {},
      el("span", {}, el("strong", {}, `${d.from_name} \u2192 ${d.to_name}`), el("br"),
        [d.km !== null ? km(d.km) : "km estimated", d.minutes !== null ? minutes(d.minutes) : "minutes estimated"].join(" \u00b7 ")),
      el("button", { type: "button", class: "button small secondary", "aria-label": `Forget ${d.from_name} to ${d.to_name}`,
        onclick: async () => { await api("DELETE", `/api/drives/${d.id}`); toast("Forgotten."); loadList(); } }, "Forget"))));
  }

  function place(value) { return value === "home" ? "home" : Number(value); }

  form.addEventListener("submit", async (event) => {
    event.preventDefault();
    const body = {
      from: place(form.elements.from.value), to: place(form.elements.to.value),
      km: numberOrRaw(form.elements.km.value), minutes: numberOrRaw(form.elements.minutes.value),
      both_ways: form.elements.both_ways.checked,
    };
    try {
      await api("PUT", "/api/drives", body);
      clearErrors(form);
      form.elements.km.value = "";
      form.elements.minutes.value = "";
      toast("Drive saved.");
      loadList();
    } catch (err) {
      showErrors(form, err);
    }
  });

  loadPlaces().then(loadList).catch((err) => toast(err.message, true));
})();
