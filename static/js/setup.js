/* Setup screen: the rep's home, working day and driving estimates. */
"use strict";

(() => {
  const { api, toast, showErrors, clearErrors, echoLocation, formValues, numberOrRaw } = Rondo;
  const form = document.getElementById("setup-form");
  const homeInput = form.elements.home;
  echoLocation(homeInput, document.getElementById("home-echo"));
  let savedHomeText = "";

  function fill(s) {
    for (const name of ["rep_name", "home_label", "day_start", "day_end", "break_min", "break_from",
      "break_until", "speed_kmh", "detour_factor", "distance_mode", "objective", "time_zone",
      "time_limit_s"]) {
      form.elements[name].value = s[name] === null || s[name] === undefined ? "" : s[name];
    }
    savedHomeText = s.home ? s.home.text : "";
    homeInput.value = savedHomeText;
    homeInput.dispatchEvent(new Event("change"));
  }

  form.addEventListener("submit", async (event) => {
    event.preventDefault();
    const v = formValues(form);
    const body = {
      rep_name: v.rep_name, home_label: v.home_label, day_start: v.day_start, day_end: v.day_end,
      break_min: numberOrRaw(v.break_min), break_from: v.break_from, break_until: v.break_until,
      speed_kmh: numberOrRaw(v.speed_kmh), detour_factor: numberOrRaw(v.detour_factor),
      distance_mode: v.distance_mode, objective: v.objective, time_zone: v.time_zone,
      time_limit_s: numberOrRaw(v.time_limit_s),
    };
    // An untouched home is left alone; an emptied one is a mistake, not a wish to forget it.
    if (v.home.trim() !== savedHomeText) body.home = v.home;
    try {
      const saved = await api("PUT", "/api/settings", body);
      clearErrors(form);
      fill(saved);
      document.body.dataset.hasHome = saved.home ? "yes" : "no";
      toast("Setup saved.");
    } catch (err) {
      showErrors(form, err);
    }
  });

  api("GET", "/api/settings").then(fill).catch((err) => toast(err.message, true));
})();
