// balancer serve: the page shows what the server computed. Every text from a schedule is put
// in the page as text (textContent / text nodes), never as markup.
"use strict";

const state = {
  session: null,
  limit: 0,
  loggerLimit: 0,
  logger: null, // the name of the logger file the server holds for this schedule
  cautions: [],
  check: null, // the check view of the uploaded schedule
  locks: {}, // circuit id -> locked, as the next balance will use
  usedLocks: null, // the locks of the balance shown
  job: null,
  table: null,
  row: "recommended",
  rowView: null,
  timer: null,
};

const $ = (id) => document.getElementById(id);

function el(tag, props, ...children) {
  const node = document.createElement(tag);
  for (const [key, value] of Object.entries(props || {})) {
    if (value === null || value === undefined || value === false) continue;
    if (key === "class") node.className = value;
    else if (key === "data") for (const [k, v] of Object.entries(value)) node.dataset[k] = v;
    else if (key.startsWith("on")) node.addEventListener(key.slice(2), value);
    else node.setAttribute(key, value === true ? "" : String(value));
  }
  for (const child of children.flat()) {
    if (child === null || child === undefined || child === false) continue;
    node.append(child instanceof Node ? child : String(child)); // strings become text nodes
  }
  return node;
}

function clear(node) {
  while (node.firstChild) node.removeChild(node.firstChild);
  return node;
}

const va = (v) => (v === null || v === undefined ? "—" : `${Math.round(v).toLocaleString("en-US")} VA`);
const amps = (v) => (v === null || v === undefined ? "—" : `${v.toFixed(1)} A`);
const pct = (v) => (v === null || v === undefined ? "—" : `${v.toFixed(2)} %`);
const spaces = (list) => (list.length ? list.join(", ") : "none");
const spacesWord = (list) => `${list.length === 1 ? "space" : "spaces"} ${spaces(list)}`;

// ------------------------------------------------------------------ the server

async function call(method, path, body, headers) {
  const response = await fetch(path, {
    method,
    headers: Object.assign({ "X-Balancer-Session": state.session || "" }, headers || {}),
    body,
  });
  let data = null;
  try {
    data = await response.json();
  } catch (_) {
    data = { error: `The server answered ${response.status} without details.`, problems: [] };
  }
  if (!response.ok) {
    const error = new Error(data.error || `The server answered ${response.status}.`);
    error.problems = data.problems || [];
    throw error;
  }
  return data;
}

const postJSON = (path, data) => call("POST", path, JSON.stringify(data), { "Content-Type": "application/json" });

function showProblems(box, error) {
  clear(box);
  box.hidden = false;
  box.append(el("p", {}, el("span", { class: "label-word" }, "Problem: "), error.message));
  if (error.problems && error.problems.length) {
    box.append(
      el("ul", {}, error.problems.map((p) => el("li", {}, p.where ? el("code", {}, p.where) : null, p.where ? " — " : "", p.what)))
    );
  }
}

function hideProblems(box) {
  clear(box);
  box.hidden = true;
}

// ------------------------------------------------------------------ upload and check

async function upload(file) {
  hideProblems($("file-problems"));
  if (!/\.(xlsx|csv)$/i.test(file.name)) {
    showProblems($("file-problems"), new Error(`${file.name}: give an .xlsx workbook or a .csv file.`));
    return;
  }
  if (state.limit && file.size > state.limit) {
    const mb = Math.floor(state.limit / (1024 * 1024));
    showProblems($("file-problems"), new Error(`${file.name} is larger than ${mb} MB; balancer refuses it.`));
    return;
  }
  $("file-status").textContent = `Reading ${file.name}…`;
  try {
    const view = await call("POST", "/api/schedule", file, { "X-Filename": encodeURIComponent(file.name) });
    $("file-status").textContent = `Read ${file.name}.`;
    state.locks = {};
    state.job = null;
    state.logger = null; // a logger file goes with its schedule
    $("typical").checked = false;
    $("logger-status").textContent = "";
    hideProblems($("logger-problems"));
    updateOverTime();
    ["step-table", "step-row"].forEach((id) => ($(id).hidden = true));
    showCheck(view);
  } catch (error) {
    $("file-status").textContent = `${file.name} could not be used.`;
    ["step-check", "step-balance", "step-table", "step-row"].forEach((id) => ($(id).hidden = true));
    showProblems($("file-problems"), error);
  }
}

async function recheck() {
  if (!state.check) return;
  const overTime = overTimeOptions();
  try {
    showCheck(await postJSON("/api/check", Object.assign({ basis: $("basis").value, rules: $("rules").value }, overTime)));
    hideProblems($("balance-problems"));
    hideProblems($("logger-problems"));
  } catch (error) {
    showProblems($(overTime.load ? "logger-problems" : "balance-problems"), error);
  }
}

// ------------------------------------------------------------------ load over time

function loadSource() {
  if ($("typical").checked) return "typical";
  return state.logger ? "logger" : "";
}

function overTimeOptions() {
  const load = loadSource();
  return { load, tz: load === "logger" ? $("tz").value.trim() : "" };
}

function updateOverTime() {
  const load = loadSource();
  $("logger-remove").hidden = !state.logger;
  $("logger-choose").textContent = state.logger ? "Choose another logger file" : "Choose a logger file (.csv)";
  // the load over time sets the goal; the trade-off table is made only when asked for
  $("goal").hidden = Boolean(load);
  if (load) $("goal").value = "spread";
  $("goal").dispatchEvent(new Event("change"));
  $("goal-note").hidden = !load;
  $("margin-field").hidden = Boolean(load);
  $("peak-table-field").hidden = !load;
  $("table-moves-field").hidden = Boolean(load) && !$("peak_table").checked;
}

async function uploadLogger(file) {
  const box = $("logger-problems");
  hideProblems(box);
  if (!/\.csv$/i.test(file.name)) {
    showProblems(box, new Error(`${file.name}: give the logger readings as a .csv file.`));
    return;
  }
  if (state.loggerLimit && file.size > state.loggerLimit) {
    const mb = Math.floor(state.loggerLimit / (1024 * 1024));
    showProblems(box, new Error(`${file.name} is larger than ${mb} MB; balancer refuses it.`));
    return;
  }
  $("logger-status").textContent = `Reading ${file.name}…`;
  const query = new URLSearchParams({ basis: $("basis").value, rules: $("rules").value, tz: $("tz").value.trim() });
  try {
    const view = await call("POST", `/api/logger?${query}`, file, { "X-Filename": encodeURIComponent(file.name) });
    state.logger = file.name;
    $("typical").checked = false;
    const block = view.check.load_over_time;
    $("logger-status").textContent = `Read ${file.name}: ${block.intervals.toLocaleString("en-US")} intervals of ${block.interval_min} min.`;
    updateOverTime();
    showCheck(view);
  } catch (error) {
    state.logger = null; // the server keeps no file it cannot read
    $("logger-status").textContent = `${file.name} could not be used; no logger file is in use.`;
    updateOverTime();
    showProblems(box, error);
    await refreshWithoutProblems();
  }
}

async function refreshWithoutProblems() {
  // the check as it now stands, keeping the problems shown above
  try {
    showCheck(await postJSON("/api/check", Object.assign({ basis: $("basis").value, rules: $("rules").value }, overTimeOptions())));
  } catch (_) {}
}

async function removeLogger() {
  try {
    await call("DELETE", "/api/logger");
  } catch (error) {
    showProblems($("logger-problems"), error);
    return;
  }
  state.logger = null;
  $("logger-status").textContent = "The logger file was removed.";
  hideProblems($("logger-problems"));
  updateOverTime();
  await recheck();
}

function intervalRow(title, interval, facts, figure) {
  if (!interval) return null;
  return el(
    "tr",
    {},
    el("td", { class: "text" }, title),
    el("td", { class: "text" }, interval.start),
    facts.lines.map((line) => el("td", {}, va(interval.line_va[line]))),
    el("td", { class: "big", data: { figure } }, va(interval.spread_va))
  );
}

function showPeak(box, view, block, facts) {
  clear(box);
  box.hidden = !view || !block;
  if (box.hidden) return;
  const first = block.first_start;
  const last = block.last_start;
  const add = (...nodes) => box.append(...nodes.filter(Boolean)); // DOM append would write "null"
  add(
    el("h3", {}, "Load over time"),
    el(
      "p",
      { class: "basis" },
      el("strong", {}, "Loads per interval: "), // not the step's nameplate/measured basis
      el("span", { data: { figure: "peak-basis" } }, view.basis),
      ` — ${block.intervals.toLocaleString("en-US")} intervals of ${block.interval_min} min, ${first} to ${last}.`
    ),
    view.measured ? null : el("p", { class: "hint" }, "The packaged shapes are invented, typical of a small commercial building: a figure to plan with, not a measurement. The command line takes your own shapes (balancer balance --profiles FILE)."),
    el(
      "table",
      { class: "grid", "aria-label": "Widest interval" },
      el("caption", { class: "text" }, "Widest interval (largest phase spread over the whole period)"),
      el("thead", {}, el("tr", {}, el("th", { class: "text" }, ""), el("th", { class: "text" }, "Starts"), facts.lines.map((line) => el("th", {}, lineTag(line, facts))), el("th", {}, "Spread"))),
      el("tbody", {}, intervalRow("As it stands", block.widest_before, facts, "peak-before-spread"), intervalRow("Arranged", block.widest_after, facts, "peak-after-spread"))
    )
  );
  const existing = block.existing_load;
  if (existing) {
    box.append(
      el(
        "dl",
        { class: "facts" },
        el("dt", {}, "Existing load from the data (NEC 220.87)"),
        el("dd", { data: { figure: "peak-existing" } }, `line ${existing.line} peaks at ${amps(existing.demand_a)} (${existing.window_min}-minute average); at 125 % ${amps(existing.existing_a)}`),
        el("dt", {}, "Data"),
        el("dd", {}, existing.remark)
      )
    );
    if (!existing.enough_data) showWarnings(box.appendChild(el("div", { class: "warnings", role: "note" })), [`NEC 220.87: ${existing.remark}.`]);
  }
  const chart = el("img", { alt: "" });
  const heat = el("img", { alt: "" });
  const span = view.whole_horizon ? "the whole period" : `the week around the widest interval (${view.window.first} to ${view.window.last})`;
  box.append(
    el(
      "div",
      { class: "charts" },
      el("figure", { class: "chart wide", id: `${box.id}-chart` }, chart, el("figcaption", {}, `Phase spread per interval over ${span}; the widest interval is marked.`)),
      el("figure", { class: "chart wide", id: `${box.id}-heat` }, heat, el("figcaption", {}, "Mean load per line by hour of day: light is least, dark is most, on one scale for every row."))
    )
  );
  setSvg(chart, view.chart);
  setSvg(heat, view.heat);
  if (block.notices.length) {
    box.append(el("details", { class: "notices" }, el("summary", {}, `What the reader noticed in the data (${block.notices.length})`), el("ul", { class: "notes" }, block.notices.map((n) => el("li", {}, n)))));
  }
}

function lineTag(line, facts) {
  const high = facts.high_leg === line;
  return el("span", { class: `line-tag line-${line}${high ? " high" : ""}` }, line, high ? " high leg" : "");
}

function showCheck(view) {
  state.check = view;
  const data = view.check;
  const panel = data.panel;
  const loads = data.loads;
  const facts = view.facts;
  $("step-check").hidden = false;
  $("step-balance").hidden = false;

  const head = clear($("panel-head"));
  head.append(
    el("span", { class: "name", data: { figure: "panel-name" } }, `Panel ${panel.name}`),
    el("span", { data: { figure: "system" } }, panel.system_label),
    el("span", {}, `${panel.spaces} spaces`),
    panel.bus_a ? el("span", {}, `bus ${panel.bus_a} A`) : null,
    panel.main_a ? el("span", {}, `main ${panel.main_a} A`) : null,
    el("span", {}, `file ${panel.source}`)
  );
  showHighLeg($("high-leg"), facts);

  const rows = facts.lines.map((line) =>
    el(
      "tr",
      {},
      el("td", {}, lineTag(line, facts)),
      el("td", { data: { figure: `va-${line}` } }, va(loads.phase_va[line])),
      el("td", { data: { figure: `amps-${line}` } }, amps(loads.line_rms_a[line])),
      el("td", {}, amps(loads.line_fundamental_a[line]))
    )
  );
  const figures = clear($("check-figures"));
  figures.append(
    el(
      "table",
      { class: "figures" },
      el("thead", {}, el("tr", {}, el("th", {}, "Line"), el("th", {}, "Load"), el("th", {}, "Current (RMS)"), el("th", {}, "Fundamental"))),
      el("tbody", {}, rows)
    ),
    el(
      "dl",
      { class: "facts" },
      el("dt", {}, "Imbalance"),
      el("dd", { class: "big", data: { figure: "imbalance" } }, pct(loads.imbalance_pct)),
      el("dt", {}, "Phase spread"),
      el("dd", { data: { figure: "spread" } }, va(loads.spread_va)),
      el("dt", {}, "Total load"),
      el("dd", { data: { figure: "total" } }, va(loads.total_va)),
      facts.neutral ? [el("dt", {}, "Neutral current (RMS)"), el("dd", { data: { figure: "neutral" } }, amps(loads.neutral_rms_a))] : null,
      loads.unbalance_factor_pct !== null ? [el("dt", {}, "Current unbalance |I2|/|I1|"), el("dd", {}, pct(loads.unbalance_factor_pct))] : null,
      data.demand ? [el("dt", {}, "Demand load"), el("dd", { data: { figure: "demand" } }, `${va(data.demand.total_demand_va)} (${data.demand.rule_set_title})`)] : null,
      data.demand ? [el("dt", {}, "Feeder design current"), el("dd", { data: { figure: "feeder" } }, `${amps(data.demand.feeder.design_a)} on line ${data.demand.feeder.design_line}`)] : null
    )
  );
  setSvg($("check-bars"), view.bars);

  const warnings = [...data.warnings];
  if (loads.neutral_exceeds_phase) warnings.push("The neutral carries more current than any line (harmonics): it counts as a current-carrying conductor.");
  if (data.demand) {
    warnings.push(...data.demand.warnings);
    data.demand.branch_flags.forEach((f) => warnings.push(`Circuit ${f.circuit}: ${f.message}`));
    if (data.demand.feeder.spare_a !== null && data.demand.feeder.spare_a < 0) {
      warnings.push(`The demand current is over the panel's rating by ${amps(-data.demand.feeder.spare_a)}.`);
    }
  }
  showWarnings($("check-warnings"), warnings);
  showDemand(data.demand);
  showPeak($("check-peak"), view.over_time, data.load_over_time, facts);
  drawPanel($("layout-now"), view.layout, facts, "now");
  updateLocksNote();
}

function showHighLeg(box, facts) {
  clear(box);
  box.hidden = !facts.high_leg;
  if (!facts.high_leg) return;
  box.append(
    el("span", { class: "label-word" }, `High leg: line ${facts.high_leg}`),
    ` is about ${Math.round(facts.high_leg_v)} V to neutral (NEC 110.15: marked orange). ` +
      "No 1-pole (line-to-neutral) load may be connected to it."
  );
}

function showWarnings(box, warnings) {
  clear(box);
  box.hidden = warnings.length === 0;
  if (!warnings.length) return;
  box.append(el("p", {}, el("span", { class: "label-word" }, `Warning${warnings.length > 1 ? "s" : ""}`)), el("ul", {}, warnings.map((w) => el("li", {}, w))));
}

function showDemand(demand) {
  const body = clear($("demand-body"));
  if (!demand) {
    body.append(el("p", {}, "No demand figures."));
    return;
  }
  const classes = Object.entries(demand.by_class).map(([name, c]) =>
    el("tr", {}, el("td", { class: "text" }, name.replace(/_/g, " ")), el("td", {}, va(c.connected_va)), el("td", {}, va(c.demand_va)), el("td", { class: "text" }, c.rule))
  );
  const f = demand.feeder;
  const fact = (label, value, figure) => [el("dt", {}, label), el("dd", { data: figure ? { figure } : null }, value)];
  body.append(
    el("p", {}, `Rule set: ${demand.rule_set_title} (${demand.edition}); occupancy: ${demand.occupancy}.`),
    el(
      "table",
      { class: "grid" },
      el("thead", {}, el("tr", {}, el("th", { class: "text" }, "Load class"), el("th", {}, "Connected"), el("th", {}, "Demand"), el("th", { class: "text" }, "Rule"))),
      el("tbody", {}, classes),
      el("tfoot", {}, el("tr", {}, el("th", { class: "text" }, "Total"), el("th", { data: { figure: "connected" } }, va(demand.total_connected_va)), el("th", {}, va(demand.total_demand_va)), el("th", {}, "")))
    ),
    el(
      "dl",
      { class: "facts" },
      fact("Design current", `${amps(f.design_a)} on line ${f.design_line}`),
      fact("Required ampacity", amps(f.required_a)),
      fact("Smallest overcurrent device", f.min_ocpd_a === null ? "—" : `${f.min_ocpd_a} A`),
      fact("Feeder conductor", `${f.conductor_cu ?? "—"} Cu (${f.conductor_cu_column_c} °C) or ${f.conductor_al ?? "—"} Al (${f.conductor_al_column_c} °C)`),
      fact("Neutral demand current", amps(f.neutral_a)),
      f.rating_a !== null ? fact("Panel rating", `${f.rating_a} A; spare ${amps(f.spare_a)} (${f.spare_pct} %)`) : null,
      f.voltage_drop_pct !== null ? fact("Voltage drop", `${f.voltage_drop_pct} %`) : null
    ),
    f.notes.length ? el("ul", { class: "notes" }, f.notes.map((n) => el("li", {}, n))) : null,
    el("ul", { class: "notes" }, demand.cautions.map((c) => el("li", {}, c)))
  );
}

function setSvg(img, svg) {
  img.src = `data:image/svg+xml;charset=utf-8,${encodeURIComponent(svg)}`;
  const label = /aria-label="([^"]*)"/.exec(svg);
  img.alt = label ? label[1].replace(/&quot;/g, '"').replace(/&apos;/g, "'").replace(/&lt;/g, "<").replace(/&gt;/g, ">").replace(/&amp;/g, "&") : "";
}

// ------------------------------------------------------------------ the panel as built

function isLocked(breaker) {
  return Object.prototype.hasOwnProperty.call(state.locks, breaker.id) ? state.locks[breaker.id] : breaker.scheduleLocked;
}

function drawPanel(box, layout, facts, kind) {
  clear(box);
  const grid = el("div", { class: "panel", role: "group", "aria-label": kind === "now" ? "Panel as it stands" : "Panel as arranged" });
  const put = (node, row, column, span) => {
    node.style.gridRow = `${row} / span ${span || 1}`;
    node.style.gridColumn = String(column);
    grid.append(node);
    return node;
  };
  put(el("div", { class: "head" }, "Odd spaces"), 1, 1);
  put(el("div", { class: "head" }, "No."), 1, 2);
  put(el("div", { class: "head" }, "Line"), 1, 3);
  put(el("div", { class: "head" }, "No."), 1, 4);
  put(el("div", { class: "head" }, "Even spaces"), 1, 5);
  const taken = new Set();
  layout.breakers.forEach((b) => b.spaces.forEach((s) => taken.add(s)));
  layout.rows.forEach((row, index) => {
    const high = facts.high_leg === row.line;
    put(el("div", { class: "space" }, String(row.left)), index + 2, 2);
    put(el("div", { class: `bus line-${row.line}${high ? " high" : ""}`, title: `line ${row.line}` }, row.line, high ? el("br") : null, high ? "HIGH LEG" : null), index + 2, 3);
    if (row.right !== null) put(el("div", { class: "space" }, String(row.right)), index + 2, 4);
    if (!taken.has(row.left)) put(el("div", { class: "empty" }, "empty"), index + 2, 1);
    if (row.right !== null && !taken.has(row.right)) put(el("div", { class: "empty" }, "empty"), index + 2, 5);
  });
  layout.breakers.forEach((b) => {
    b.scheduleLocked = b.locked;
    const first = b.spaces[0];
    const row = Math.floor((first - 1) / 2) + 2;
    put(breakerButton(b, kind), row, first % 2 === 1 ? 1 : 5, b.poles);
  });
  box.append(grid);
  if (layout.unplaced.length) {
    box.append(el("p", { class: "unplaced" }, el("span", { class: "label-word" }, "Not in a space yet: "), layout.unplaced.map((u) => `${u.id} ${u.description}`).join("; ")));
  }
}

function breakerButton(b, kind) {
  const locked = isLocked(b);
  const marks = [];
  if (b.moved) marks.push(el("span", { class: "tag moved" }, `moved from ${spaces(b.from)}`));
  if (b.new) marks.push(el("span", { class: "tag new" }, "new breaker"));
  if (locked) marks.push(el("span", { class: "tag locked" }, "locked"));
  if (b.spare) marks.push(el("span", { class: "tag" }, "spare"));
  if (b.group) marks.push(el("span", { class: "tag" }, `multiwire ${b.group}`));
  const classes = ["breaker", b.moved ? "moved" : "", b.new ? "new" : "", locked ? "locked" : "", b.spare ? "spare" : "", locked !== b.scheduleLocked && kind === "now" ? "changed" : ""];
  const words = [`Circuit ${b.id}`, b.description, `${b.poles}-pole`, `spaces ${spaces(b.spaces)}`, `lines ${b.lines.join(" ")}`, b.moved ? `moved from spaces ${spaces(b.from)}` : "", b.new ? "new breaker" : "", locked ? "locked" : "free to move"];
  return el(
    "button",
    {
      type: "button",
      class: classes.filter(Boolean).join(" "),
      "aria-pressed": locked ? "true" : "false",
      "aria-label": words.filter(Boolean).join(", "),
      data: { circuit: b.id },
      onclick: () => toggleLock(b),
    },
    el("span", { class: "top" }, el("span", { class: "cid" }, b.id), el("span", { class: "desc" }, b.description)),
    el("span", { class: "sub" }, `${b.poles}P${b.trip_a ? ` ${b.trip_a} A` : ""} · ${va(b.load_va)} · ${b.lines.join("")}`),
    marks.length ? el("span", { class: "marks" }, marks) : null
  );
}

function toggleLock(b) {
  state.locks[b.id] = !isLocked(b);
  const focused = document.activeElement && document.activeElement.dataset ? document.activeElement.dataset.circuit : null;
  const where = document.activeElement && document.activeElement.closest("#layout-row") ? "row" : "now";
  drawPanel($("layout-now"), state.check.layout, state.check.facts, "now");
  if (state.rowView) drawPanel($("layout-row"), state.rowView.layout, state.rowView.facts, "row");
  if (focused) {
    const again = document.querySelector(`#layout-${where} [data-circuit="${CSS.escape(focused)}"]`);
    if (again) again.focus();
  }
  updateLocksNote();
}

function lockRequest() {
  const locks = {};
  const byId = Object.fromEntries(state.check.layout.breakers.map((b) => [b.id, b]));
  for (const [id, locked] of Object.entries(state.locks)) {
    if (byId[id] && byId[id].locked !== locked) locks[id] = locked;
  }
  return locks;
}

function updateLocksNote() {
  const note = $("locks-note");
  if (!state.check) return;
  const changed = lockRequest();
  const same = JSON.stringify(changed) === JSON.stringify(state.usedLocks || {});
  note.hidden = same || !state.job;
  const ids = Object.entries(changed).map(([id, on]) => `${id} ${on ? "locked" : "free"}`);
  note.textContent = `Locks changed since this balance (${ids.join(", ") || "all as in the schedule"}): select “Re-balance” to use them.`;
  $("run").textContent = state.job ? "Re-balance" : "Find arrangements";
}

// ------------------------------------------------------------------ balance job

function formOptions() {
  const value = (id) => $(id).value.trim();
  return {
    goal: value("goal"),
    bank_kva: value("bank_kva"),
    open_delta: $("open_delta").checked,
    within_pct: value("within_pct"),
    max_moves: value("max_moves"),
    basis: value("basis"),
    rules: value("rules"),
    tradeoff_moves: value("tradeoff_moves"),
    time_limit_s: value("time_limit_s"),
    fresh: $("fresh").checked,
    locks: lockRequest(),
    ...overTimeOptions(),
    peak_table: $("peak_table").checked,
  };
}

async function startBalance(event) {
  event.preventDefault();
  hideProblems($("balance-problems"));
  const options = formOptions();
  $("progress").textContent = "Starting the solver…";
  state.rowView = null;
  ["step-table", "step-row"].forEach((id) => ($(id).hidden = true)); // a new balance replaces them
  try {
    const started = await postJSON("/api/balance", options);
    state.job = started.job;
    state.usedLocks = options.locks;
    $("cancel").hidden = false;
    $("run").disabled = true;
    $("progress").textContent = "Solving…";
    poll();
  } catch (error) {
    showProblems($("balance-problems"), error);
  }
}

async function poll() {
  clearTimeout(state.timer);
  const job = state.job;
  let status;
  try {
    status = await call("GET", `/api/jobs/${job}`);
  } catch (error) {
    finishRun();
    showProblems($("balance-problems"), error);
    return;
  }
  if (job !== state.job) return;
  if (status.state === "running") {
    $("progress").textContent = `Solving… ${status.elapsed_s.toFixed(0)} s (each row of the table is a proof of its own)`;
    state.timer = setTimeout(poll, 500);
    return;
  }
  finishRun();
  if (status.state === "cancelled") {
    $("progress").textContent = "Cancelled: the solver was stopped and nothing it found is kept.";
  } else if (status.state === "failed") {
    $("progress").textContent = "The balance did not finish.";
    showProblems($("balance-problems"), Object.assign(new Error("The balance could not be done."), { problems: status.problems }));
  } else {
    $("progress").textContent = `Done in ${status.elapsed_s.toFixed(1)} s.`;
    state.table = status.table;
    showTable(status.table);
    await showRow("recommended");
  }
  updateLocksNote();
}

function finishRun() {
  $("cancel").hidden = true;
  $("run").disabled = false;
}

async function cancelBalance() {
  if (!state.job) return;
  try {
    await call("POST", `/api/jobs/${state.job}/cancel`);
  } catch (error) {
    showProblems($("balance-problems"), error);
  }
  poll();
}

// ------------------------------------------------------------------ the trade-off table

function showTable(table) {
  $("step-table").hidden = false;
  const rec = table.recommendation;
  $("recommendation").textContent = rec ? `Recommended: ${rec.message}${rec.neutral ? `. Note: ${rec.neutral}` : ""}` : `Recommended: the best arrangement found (${table.recommended.status}).`;
  const box = clear($("table"));
  const entries = table.rows.map((row, index) => ({ key: String(index), row, index }));
  if (table.recommended_row === null) {
    const r = table.recommended;
    entries.unshift({ key: "recommended", row: { moves: r.moves, goal_value: r.goal_value, spread_va: r.spread_va, imbalance_pct: r.imbalance_pct, neutral_fundamental_a: r.neutral_fundamental_a, status_text: r.status_text }, index: null });
  }
  const goal = table.goal || (table.rows.length ? table.rows[0].goal : "spread");
  const goalText = (v) => (v === undefined || v === null ? "—" : goal === "peak" ? va(v) : v.toFixed(2));
  const body = el("tbody");
  entries.forEach((entry) => {
    const recommended = entry.index === table.recommended_row || entry.key === "recommended";
    const key = recommended ? "recommended" : entry.key;
    const tr = el(
      "tr",
      { tabindex: "0", "aria-selected": "false", data: { row: key }, onclick: () => showRow(key), onkeydown: (e) => rowKey(e, key) },
      el("td", {}, String(entry.row.moves), recommended ? el("span", { class: "tag" }, "recommended") : null),
      el("td", {}, va(entry.row.spread_va)),
      el("td", {}, pct(entry.row.imbalance_pct)),
      el("td", {}, amps(entry.row.neutral_fundamental_a)),
      goal !== "spread" ? el("td", { data: goal === "peak" ? { figure: "peak-goal" } : null }, goalText(entry.row.goal_value)) : null,
      el("td", { class: "text" }, entry.row.status_text)
    );
    body.append(tr);
  });
  box.append(
    el(
      "table",
      { class: "grid tradeoff", "aria-label": "Moves against balance" },
      el(
        "thead",
        {},
        el("tr", {}, el("th", {}, "Moves (at most)"), el("th", {}, goal === "peak" ? "Spread (connected)" : "Spread"), el("th", {}, goal === "peak" ? "Imbalance (connected)" : "Imbalance"), el("th", {}, "Neutral (fundamental)"), goal === "peak" ? el("th", {}, "Widest interval spread") : goal !== "spread" ? el("th", {}, `Goal: ${goal}`) : null, el("th", { class: "text" }, "Status"))
      ),
      body
    )
  );
  if (!table.rows.length) {
    const why = table.over_time
      ? "No trade-off table: with a load over time each row is a solve over every interval, so the table is made only when asked for (tick “Trade-off table over the load over time”)."
      : "No trade-off table for a fresh layout: the best balance is recommended.";
    box.append(el("p", { class: "hint" }, why));
  }
  setSvg($("table-chart"), table.chart);
  const notes = clear($("table-notes"));
  table.notes.forEach((n) => notes.append(el("li", {}, n)));
}

function rowKey(event, key) {
  if (event.key === "Enter" || event.key === " ") {
    event.preventDefault();
    showRow(key);
  }
}

async function showRow(key) {
  const job = state.job;
  let view;
  try {
    view = await call("GET", `/api/jobs/${job}/rows/${key}`);
  } catch (error) {
    showProblems($("balance-problems"), error);
    return;
  }
  if (job !== state.job) return;
  state.row = key;
  state.rowView = view;
  document.querySelectorAll("#table tbody tr").forEach((tr) => tr.setAttribute("aria-selected", tr.dataset.row === key ? "true" : "false"));
  setSvg($("table-chart"), view.table.chart);
  showArrangement(view, key);
}

function showArrangement(view, key) {
  const data = view.balance;
  const facts = view.facts;
  $("step-row").hidden = false;
  const moves = data.moves.length;
  $("row-title").textContent = key === "recommended" ? `Recommended arrangement: ${moves} move(s)` : `Arrangement for at most ${view.table.rows[Number(key)].moves} move(s), using ${moves}`;
  $("row-status").textContent = `Status: ${view.status_text}. Goal: ${view.goal_phrase}; engine ${data.engine}, ${data.solve_seconds.toFixed(1)} s.`;
  const over = data.load_over_time;
  const peakNote = $("row-peak-note");
  peakNote.hidden = !(over && over.widest_after);
  if (over && over.widest_after) {
    peakNote.textContent =
      `The goal was the widest interval of the load over time: its phase spread goes from ${va(over.widest_before.spread_va)} as it stands to ${va(over.widest_after.spread_va)} arranged (see “Load over time” below). ` +
      "The figures and bars just below are of the connected loads (schedule VA); this arrangement aims at the widest interval instead.";
  }
  const figures = clear($("row-figures"));
  // with new circuits, a middle state: the panel with them landed and nothing moved (the 0-move row)
  const middle = data.with_additions;
  const mid = (get) => (middle ? [el("td", {}, get(middle))] : []);
  figures.append(
    el(
      "table",
      { class: "figures" },
      el("thead", {}, el("tr", {}, el("th", {}, ""), el("th", {}, "As it stands"), middle ? el("th", {}, "With additions") : null, el("th", {}, "Arranged"))),
      el(
        "tbody",
        {},
        facts.lines.map((line) => el("tr", {}, el("td", {}, lineTag(line, facts), " load"), el("td", {}, va(data.before.phase_va[line])), ...mid((d) => va(d.phase_va[line])), el("td", { data: { figure: `after-va-${line}` } }, va(data.after.phase_va[line])))),
        facts.lines.map((line) => el("tr", {}, el("td", {}, lineTag(line, facts), " current"), el("td", {}, amps(data.before.line_rms_a[line])), ...mid((d) => amps(d.line_rms_a[line])), el("td", {}, amps(data.after.line_rms_a[line])))),
        facts.neutral ? el("tr", {}, el("td", {}, "Neutral (RMS)"), el("td", {}, amps(data.before.neutral_rms_a)), ...mid((d) => amps(d.neutral_rms_a)), el("td", {}, amps(data.after.neutral_rms_a))) : null,
        el("tr", {}, el("td", {}, "Spread"), el("td", {}, va(data.before.spread_va)), ...mid((d) => va(d.spread_va)), el("td", {}, va(data.after.spread_va))),
        el("tr", {}, el("td", {}, "Imbalance"), el("td", {}, pct(data.before.imbalance_pct)), ...mid((d) => pct(d.imbalance_pct)), el("td", { class: "big", data: { figure: "after-imbalance" } }, pct(data.after.imbalance_pct)))
      )
    ),
    ...(middle ? data.states.map((s) => el("p", { class: "state-note" }, `${s.title}: ${s.detail}.`)) : [])
  );
  setSvg($("row-bars"), view.bars);
  showPeak($("row-peak"), view.over_time, data.load_over_time, facts);
  const notes = clear($("row-notes"));
  [...data.notes, ...data.warnings].forEach((n) => notes.append(el("li", {}, n)));
  drawPanel($("layout-row"), view.layout, facts, "row");

  const moveBox = clear($("moves"));
  if (!data.moves.length) moveBox.append(el("p", {}, "No breaker moves."));
  else {
    moveBox.append(
      el(
        "table",
        { class: "grid" },
        el("thead", {}, el("tr", {}, el("th", { class: "text" }, "Circuit"), el("th", { class: "text" }, "Description"), el("th", { class: "text" }, "From"), el("th", { class: "text" }, "To"))),
        el(
          "tbody",
          {},
          data.moves.map((m) =>
            el("tr", {}, el("td", { class: "text" }, m.id), el("td", { class: "text" }, m.description), el("td", { class: "text" }, `${spaces(m.from_spaces)} (${m.from_lines.join("")})`), el("td", { class: "text" }, `${spaces(m.to_spaces)} (${m.to_lines.join("")})`))
          )
        )
      )
    );
  }
  const cautions = clear($("cautions"));
  cautions.append(el("h3", {}, el("span", { class: "label-word" }, "Caution"), " before any work at the panel"), el("ul", {}, view.cautions.map((c) => el("li", {}, c))));
  const order = clear($("work-order"));
  if (!data.work_order.length) order.append(el("p", {}, "No steps: nothing to move."));
  else {
    order.append(
      el(
        "ol",
        { class: "steps" },
        data.work_order.map((step) =>
          el(
            "li",
            {},
            el("div", { class: "action" }, `Step ${step.step}: ${view.actions[step.action] || step.action}`, step.group ? ` (multiwire group ${step.group})` : ""),
            step.circuits.flatMap((c) => [
              el("div", { class: "item" }, `Circuit ${c.id} ${c.description}: `, c.from_spaces.length ? `${spacesWord(c.from_spaces)} (${c.from_lines.join("")})` : "not in the panel", " → ", c.to_spaces.length ? `${spacesWord(c.to_spaces)} (${c.to_lines.join("")})` : "set aside", c.notes ? ` — ${c.notes}` : ""),
              // a new breaker's rating and wire; a load that must not lose power, in strong type
              ...(c.details || []).map((d) => el("div", { class: d.startsWith("MUST NOT LOSE POWER") ? "item must-stay-on" : "item hint" }, d))
            ]),
            step.remark ? el("div", { class: "item hint" }, step.remark) : null
          )
        )
      )
    );
  }
}

// ------------------------------------------------------------------ downloads

async function download(kind) {
  const status = $("download-status");
  status.textContent = `Preparing the ${kind}…`;
  try {
    const response = await fetch(`/api/jobs/${state.job}/rows/${state.row}/${kind}`, { headers: { "X-Balancer-Session": state.session } });
    if (!response.ok) {
      let data = {};
      try {
        data = await response.json();
      } catch (_) {}
      throw Object.assign(new Error(data.error || `The server answered ${response.status}.`), { problems: data.problems || [] });
    }
    const disposition = response.headers.get("Content-Disposition") || "";
    const name = /filename="([^"]+)"/.exec(disposition);
    const blob = await response.blob();
    const url = URL.createObjectURL(blob);
    const link = el("a", { href: url, download: name ? name[1] : `balanced.${kind}` });
    document.body.append(link);
    link.click();
    link.remove();
    setTimeout(() => URL.revokeObjectURL(url), 10000);
    status.textContent = `Downloaded ${name ? name[1] : kind}.`;
  } catch (error) {
    status.textContent = "";
    showProblems($("balance-problems"), error);
  }
}

// ------------------------------------------------------------------ start

function wireUp() {
  const drop = $("drop");
  $("file").addEventListener("change", (e) => {
    if (e.target.files.length) upload(e.target.files[0]);
    e.target.value = "";
  });
  drop.addEventListener("dragover", (e) => {
    e.preventDefault();
    drop.classList.add("over");
  });
  drop.addEventListener("dragleave", () => drop.classList.remove("over"));
  drop.addEventListener("drop", (e) => {
    e.preventDefault();
    drop.classList.remove("over");
    if (e.dataTransfer.files.length) upload(e.dataTransfer.files[0]);
  });
  $("options").addEventListener("submit", startBalance);
  $("cancel").addEventListener("click", cancelBalance);
  $("goal").addEventListener("change", () => {
    const transformer = $("goal").value === "transformer";
    $("kva-field").hidden = !transformer;
    $("delta-field").hidden = !transformer;
  });
  $("logger-file").addEventListener("change", (e) => {
    if (e.target.files.length) uploadLogger(e.target.files[0]);
    e.target.value = "";
  });
  $("logger-remove").addEventListener("click", removeLogger);
  $("typical").addEventListener("change", () => {
    updateOverTime();
    recheck();
  });
  $("tz").addEventListener("change", () => {
    if (loadSource() === "logger") recheck();
  });
  $("peak_table").addEventListener("change", updateOverTime);
  $("basis").addEventListener("change", recheck);
  $("rules").addEventListener("change", recheck);
  document.querySelectorAll(".downloads button").forEach((b) => b.addEventListener("click", () => download(b.dataset.kind)));
}

async function start() {
  wireUp();
  try {
    const session = await call("POST", "/api/session");
    state.session = session.session;
    state.limit = session.upload_limit_bytes;
    state.loggerLimit = session.logger_limit_bytes;
    state.cautions = session.cautions;
    $("file-hint").textContent = `Up to ${Math.floor(state.limit / (1024 * 1024))} MB. The file stays on this computer.`;
    $("logger-hint").textContent = `Interval readings: a time column, then one column per circuit (such as “12 (A)” or “9 (kW)”) or one per line. Up to ${Math.floor(state.loggerLimit / (1024 * 1024))} MB; it stays on this computer.`;
  } catch (error) {
    showProblems($("file-problems"), error);
  }
}

document.addEventListener("DOMContentLoaded", start);
