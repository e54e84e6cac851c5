/* The clock view: one row per stop along the hours of the day, drawn as inline SVG.
   Behind each visit, the span in which it may start; a visit starting close to the
   end of its span is drawn in the trouble colour so a tight spot stands out. */
"use strict";

const RondoTimeline = (() => {
  const { svg } = Rondo;
  const TIGHT_MIN = 10; // fewer minutes than this left in the window counts as tight
  const ROW_H = 34;
  const TOP = 22;
  const LEFT = 4;

  function minutesOf(text) {
    const [h, m] = text.split(":").map(Number);
    return h * 60 + m;
  }

  function draw(container, plan, dayStartText) {
    const visits = plan.visits;
    const from = Math.min(plan.start.min, minutesOf(dayStartText || plan.start.clock));
    const dayEnd = minutesOf(plan.day_end);
    const to = Math.max(plan.return_min, dayEnd);
    const startHour = Math.floor(from / 60);
    const endHour = Math.ceil(to / 60);
    const width = Math.max(320, container.clientWidth - 4);
    const span = (endHour - startHour) * 60;
    const x = (m) => LEFT + ((m - startHour * 60) / span) * (width - 2 * LEFT);
    const rows = visits.length + 1;
    const height = TOP + rows * ROW_H + 6;
    const root = svg("svg", { width, height, viewBox: `0 0 ${width} ${height}`, role: "img",
      "aria-label": "The day along the clock: drives, waits and visits" });
    const defs = svg("defs");
    const hatch = svg("pattern", { id: "tl-hatch", width: 5, height: 5, patternUnits: "userSpaceOnUse",
      patternTransform: "rotate(45)" });
    hatch.append(svg("rect", { width: 5, height: 5, fill: "#ffffff" }),
      svg("line", { x1: 0, y1: 0, x2: 0, y2: 5, stroke: "#6b6b6b", "stroke-width": 2 }));
    defs.append(hatch);
    root.append(defs);

    for (let h = startHour; h <= endHour; h++) {
      const hx = x(h * 60);
      root.append(svg("line", { class: "tl-grid", x1: hx, x2: hx, y1: TOP - 4, y2: height }));
      if ((h - startHour) % (span > 600 ? 2 : 1) === 0) {
        root.append(svg("text", { class: "tl-hour", x: Math.min(hx + 2, width - 30), y: 13 }, `${String(h).padStart(2, "0")}h`));
      }
    }
    const ex = x(dayEnd);
    root.append(svg("line", { class: "tl-end", x1: ex, x2: ex, y1: TOP - 6, y2: height }));

    function bar(cls, a, b, y, title) {
      if (b - a <= 0.01) return;
      const rect = svg("rect", { class: cls, x: x(a), y, width: Math.max(1.5, x(b) - x(a)), height: 12, rx: 2 });
      rect.append(svg("title", {}, title));
      root.append(rect);
    }

    visits.forEach((v, k) => {
      const y = TOP + k * ROW_H;
      const barY = y + 16;
      const label = svg("text", { class: "tl-label", x: LEFT + 2, y: y + 12 });
      label.textContent = `${k + 1}. ${v.name}`;
      root.append(label);
      for (const [a, b] of v.window_spans) {
        const w = svg("rect", { class: "tl-window", x: x(a), y: barY - 4, width: Math.max(2, x(b) - x(a)), height: 20, rx: 3 });
        w.append(svg("title", {}, `${v.name} may start ${Rondo.clock(a)}\u2013${Rondo.clock(b)}`));
        root.append(w);
      }
      bar("tl-drive", v.arrive_min - v.leg_min, v.arrive_min, barY, `drive to ${v.name}`);
      bar("tl-wait", v.arrive_min, v.start_min, barY, `wait at ${v.name}`);
      if (v.break) bar("tl-pause", minutesOf(v.break.start), minutesOf(v.break.end), barY, "break");
      const room = v.window_spans.length
        ? Math.min(...v.window_spans.filter(([a, b]) => v.start_min >= a - 0.01 && v.start_min <= b + 0.01).map(([, b]) => b - v.start_min))
        : Infinity;
      const tight = room < TIGHT_MIN;
      bar(tight ? "tl-visit tight" : "tl-visit", v.start_min, v.depart_min, barY,
        `visit ${v.name} ${v.start}\u2013${v.depart}${tight ? " (tight: little room in its window)" : ""}`);
    });
    const y = TOP + visits.length * ROW_H;
    root.append(svg("text", { class: "tl-label", x: LEFT + 2, y: y + 12 }, `back home ${plan.return}`));
    if (plan.break_before_return) {
      bar("tl-pause", minutesOf(plan.break_before_return.start), minutesOf(plan.break_before_return.end), y + 16, "break");
    }
    bar("tl-drive", plan.return_min - plan.return_leg_min, plan.return_min, y + 16, "drive home");
    container.replaceChildren(root);
  }

  return { draw, TIGHT_MIN };
})();
