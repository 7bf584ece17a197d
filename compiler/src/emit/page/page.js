// The page of `detent view`: steps the simulator SIM (emitted from the lowered form by
// detent's JavaScript back end) and shows what it does. Nothing here decides which
// rule fires; the page only draws, keeps the trace, and reads and writes traces.
"use strict";
(() => {
  const DATA = JSON.parse(document.getElementById("detent-data").textContent);
  const $ = (id) => document.getElementById(id);
  const text = (tag, s, cls) => {
    const e = document.createElement(tag);
    e.textContent = s;
    if (cls) e.className = cls;
    return e;
  };

  $("where").textContent = DATA.file;
  if (DATA.live !== null && DATA.live !== undefined) {
    // Served by `detent view`: poll for saves, keep the trace across the reload.
    $("live-status").textContent = "live: reloads when the file is saved";
    const key = "detent-view:" + DATA.file;
    const poll = () => {
      fetch("/version", { cache: "no-store" })
        .then((r) => r.text())
        .then((v) => {
          if (Number(v) !== DATA.live) {
            if (SIM) sessionStorage.setItem(key, JSON.stringify(history.map(named)));
            location.reload();
          } else {
            setTimeout(poll, 600);
          }
        })
        .catch(() => {
          $("live-status").textContent = "not live: detent view has stopped";
        });
    };
    setTimeout(poll, 600);
  } else {
    $("live-status").textContent = "a saved page (no live reload)";
  }
  if (!SIM) {
    $("title").textContent = "The spec has errors";
    $("viewer").hidden = true;
    $("spec-errors").hidden = false;
    $("spec-errors").textContent = DATA.errors;
    return;
  }

  $("title").textContent = DATA.machine;
  $("diagram").innerHTML = DATA.svg;

  // ---- the trace ------------------------------------------------------------------
  // history: the steps taken, {event, inputs: bool[]}; results: what each did.
  let history = [];
  let results = [];
  let state = SIM.start;
  let timers = SIM.timers.map(() => 0);
  let counters = SIM.counters.map(() => 0);
  let pending = []; // replay steps not yet taken
  let replayTotal = 0;

  const named = (s) => {
    const inputs = {};
    s.inputs.forEach((v, i) => { if (v) inputs[SIM.inputs[i]] = true; });
    return { event: SIM.events[s.event], inputs };
  };

  function doStep(event, inputs, replayed) {
    const r = SIM.step(state, event, (i) => inputs[i], timers, counters);
    history.push({ event, inputs: inputs.slice(), replayed: !!replayed });
    results.push(r);
    state = r.to;
    timers = r.timers;
    counters = r.counters;
  }

  function back() {
    if (history.length === 0) return;
    const steps = history.slice(0, -1);
    restart();
    for (const s of steps) doStep(s.event, s.inputs, s.replayed);
  }

  function restart() {
    history = [];
    results = [];
    state = SIM.start;
    timers = SIM.timers.map(() => 0);
    counters = SIM.counters.map(() => 0);
  }

  // ---- controls -----------------------------------------------------------------
  const picker = $("event-picker");
  SIM.events.forEach((e, i) => {
    const o = document.createElement("option");
    o.value = e;
    o.textContent = e;
    o.dataset.index = i;
    picker.appendChild(o);
  });
  const toggles = SIM.inputs.map((name, i) => {
    const label = document.createElement("label");
    const box = document.createElement("input");
    box.type = "checkbox";
    box.name = name;
    box.id = "input-" + i;
    label.appendChild(box);
    label.appendChild(document.createTextNode((i < 9 ? `${i + 1} ` : "") + name));
    $("input-toggles").appendChild(label);
    return box;
  });
  if (SIM.inputs.length === 0) $("input-toggles").appendChild(text("span", "(no inputs)"));
  const lamps = SIM.outputs.map((name) => {
    const li = text("li", name, "lamp");
    li.setAttribute("role", "checkbox");
    li.setAttribute("aria-readonly", "true");
    li.dataset.output = name;
    $("lamps").appendChild(li);
    return li;
  });
  if (SIM.outputs.length === 0) $("lamps").appendChild(text("li", "(no outputs)"));

  const chosenEvent = () => picker.selectedIndex;
  const chosenInputs = () => toggles.map((b) => b.checked);

  // The step is taken `Times` times (1 to 100000): `Tick` a hundred times to let a
  // timeout come due, as a trace line `Tick *100` does.
  function stepFromControls() {
    pending = [];
    const n = Math.min(100000, Math.max(1, Math.floor(Number($("repeat-count").value)) || 1));
    for (let k = 0; k < n; k++) doStep(chosenEvent(), chosenInputs(), false);
    show();
  }

  function replayNext() {
    if (pending.length === 0) return;
    const s = pending.shift();
    picker.selectedIndex = s.event;
    toggles.forEach((b, i) => { b.checked = s.inputs[i]; });
    doStep(s.event, s.inputs, true);
    show();
  }

  function replay(steps, what) {
    restart();
    pending = steps;
    replayTotal = steps.length;
    $("replay-status").textContent = `${what}: ${steps.length} steps from the start; press Next replay step.`;
    show();
  }

  // ---- showing --------------------------------------------------------------------
  const svg = $("diagram").querySelector("svg");
  const lineOf = (r, n) => {
    const given = SIM.inputs.filter((_, i) => history[n].inputs[i]).map((x) => x + "=1");
    const how = r.handled ? "" : r.rejected ? ", rejected" : ", ignored";
    const list = (xs, names) => (xs.length ? xs.map((x) => names[x]).join(", ") : "none");
    return `step ${n + 1}: ${SIM.events[r.event]} (${given.length ? given.join(" ") : "no inputs"}) ` +
      `${SIM.states[r.from]} -> ${SIM.states[r.to]}${how}; outputs: ${list(r.outputs, SIM.outputs)}; ` +
      `actions: ${list(r.actions, SIM.actions)}`;
  };

  function show() {
    $("current-state").textContent = SIM.states[state];
    $("current-state").dataset.state = SIM.states[state];
    $("step-count").textContent = `after ${history.length} step${history.length === 1 ? "" : "s"}`;
    const last = results[results.length - 1];
    const on = last ? last.outputs : SIM.moore(state);
    lamps.forEach((l, i) => {
      const lit = on.includes(i);
      l.setAttribute("aria-checked", lit ? "true" : "false");
      l.title = lit ? "on" : "off";
    });
    $("last-step").textContent = last ? lineOf(last, results.length - 1) : "none yet";
    const acts = $("last-actions");
    acts.replaceChildren(...(last ? last.actions.map((a) => text("li", SIM.actions[a])) : []));
    if (!last || last.actions.length === 0) acts.replaceChildren(text("li", "(none)", "none"));
    // Timers: the value of each timer that counts in the current state, and how many
    // time-base events until the next timeout.
    if (SIM.timers.length > 0) {
      $("timers-heading").hidden = false;
      $("timers").hidden = false;
      const items = SIM.timers
        .map((t, k) => [t, k])
        .filter(([t]) => t.states.includes(state))
        .map(([t, k]) => text("li", `${t.scope}: ${timers[k]} of ${t.max}`));
      const next = SIM.nextTimeout(state, timers);
      items.push(text("li", next === null ? "no timeout pending" : `next timeout in ${next} ${SIM.events[SIM.timeBase]}`));
      $("timers").replaceChildren(...items);
    }
    // Counters: each one's value and range (they keep their values in every state).
    if (SIM.counters.length > 0) {
      $("counters-heading").hidden = false;
      $("counters").hidden = false;
      $("counters").replaceChildren(...SIM.counters.map((c, k) => {
        const li = text("li", `${c.name}: ${counters[k]} of ${c.max}`);
        li.dataset.counter = c.name;
        li.dataset.value = String(counters[k]);
        return li;
      }));
    }
    const tr = $("trace");
    tr.replaceChildren(...results.map((r, n) => {
      const li = text("li", lineOf(r, n));
      if (history[n].replayed) li.className = "replayed";
      return li;
    }));
    tr.scrollTop = tr.scrollHeight;
    $("back-button").disabled = history.length === 0;
    $("replay-next").disabled = pending.length === 0;
    $("replay-all").disabled = pending.length === 0;
    if (replayTotal > 0) {
      $("replay-status").textContent = pending.length > 0
        ? `Replay: ${replayTotal - pending.length} of ${replayTotal} steps taken; next: ${SIM.events[pending[0].event]}.`
        : `Replay: all ${replayTotal} steps taken.`;
    }
    if (svg) {
      svg.querySelectorAll(".node.current, .edge.last").forEach((e) => e.classList.remove("current", "last"));
      const node = svg.querySelector(`.node[data-node="${state}"]`);
      if (node) node.classList.add("current");
      if (last && last.handled) {
        svg.querySelectorAll(`.edge[data-from~="${last.from}"][data-to="${last.to}"]`)
          .forEach((e) => e.classList.add("last"));
      }
    }
    document.querySelectorAll("#state-table tbody tr").forEach((row) => {
      row.classList.toggle("current", row.dataset.state === SIM.states[state]);
    });
  }

  // ---- findings -------------------------------------------------------------------
  const findings = DATA.findings || [];
  function flag(f, button) {
    const was = button.getAttribute("aria-pressed") === "true";
    document.querySelectorAll("#findings button").forEach((b) => b.setAttribute("aria-pressed", "false"));
    document.querySelectorAll(".flagged").forEach((e) => e.classList.remove("flagged"));
    if (was) return;
    button.setAttribute("aria-pressed", "true");
    const states = new Set(f.states || []);
    if (f.state) states.add(f.state);
    states.forEach((name) => {
      const i = SIM.states.indexOf(name);
      if (svg && i >= 0) svg.querySelector(`.node[data-node="${i}"]`)?.classList.add("flagged");
    });
    const line = f.span ? f.span.line : -1;
    DATA.rules.forEach((r) => {
      if (r.line !== line) return;
      for (const [a, b] of r.edges) {
        svg?.querySelectorAll(`.edge[data-from~="${a}"][data-to="${b}"]`).forEach((e) => e.classList.add("flagged"));
      }
    });
    DATA.states.forEach((s, i) => { if (s.line === line && svg) svg.querySelector(`.node[data-node="${i}"]`)?.classList.add("flagged"); });
    document.querySelectorAll("#state-table tbody tr").forEach((row) => {
      if (states.has(row.dataset.state) && (!f.event || f.event === row.dataset.event)) row.classList.add("flagged");
    });
    const first = svg?.querySelector(".flagged");
    if (first) first.scrollIntoView({ block: "nearest", inline: "nearest" });
  }
  if (findings.length === 0) {
    $("findings").appendChild(text("li", "No findings: check is clean."));
  }
  findings.forEach((f) => {
    const li = document.createElement("li");
    const b = document.createElement("button");
    b.type = "button";
    b.setAttribute("aria-pressed", "false");
    b.appendChild(text("span", f.level, "level " + f.level));
    b.appendChild(text("span", `${f.message} [${f.lint}]` + (f.span ? ` line ${f.span.line}` : "")));
    b.addEventListener("click", () => flag(f, b));
    li.appendChild(b);
    if (f.trace) {
      const rb = text("button", "Replay its counterexample");
      rb.type = "button";
      rb.addEventListener("click", () => {
        const steps = parseSteps(f.trace);
        if (steps.error) showError(steps.error); else replay(steps, "Counterexample");
      });
      li.appendChild(rb);
    }
    $("findings").appendChild(li);
  });

  // ---- the state table ------------------------------------------------------------
  (() => {
    const t = DATA.table;
    if (!t || !t.rows) return;
    const head = document.createElement("thead");
    const hr = document.createElement("tr");
    for (const h of ["state", "event", "guard", "next", "outputs", "actions"]) hr.appendChild(text("th", h));
    head.appendChild(hr);
    const body = document.createElement("tbody");
    for (const r of t.rows) {
      const tr = document.createElement("tr");
      tr.dataset.state = r.state;
      tr.dataset.event = r.event || "";
      const outs = (r.moore || []).concat(r.mealy || []);
      for (const c of [r.state, r.event || "", r.guard || "", r.next || "", outs.join(", "), (r.actions || []).join(", ")]) {
        tr.appendChild(text("td", String(c)));
      }
      body.appendChild(tr);
    }
    $("state-table").replaceChildren(head, body);
  })();

  // ---- traces in the `run --trace` format -------------------------------------------
  function showError(msg) { $("trace-error").textContent = msg; }

  function stepOf(obj, where) {
    if (typeof obj !== "object" || obj === null || typeof obj.event !== "string") {
      return { error: `${where}: a step is {"event": "E", "inputs": {...}}` };
    }
    for (const k of Object.keys(obj)) {
      if (k !== "event" && k !== "inputs" && k !== "repeat") return { error: `${where}: unknown key \`${k}\`` };
    }
    let repeat = 1;
    if ("repeat" in obj) {
      if (!Number.isInteger(obj.repeat) || obj.repeat < 1 || obj.repeat > MAX_STEPS) {
        return { error: `${where}: \`repeat\` must be a whole number from 1 to ${MAX_STEPS}` };
      }
      repeat = obj.repeat;
    }
    const e = SIM.events.indexOf(obj.event);
    if (e < 0) return { error: `${where}: unknown event \`${obj.event}\`` };
    const inputs = SIM.inputs.map(() => false);
    for (const [k, v] of Object.entries(obj.inputs || {})) {
      const i = SIM.inputs.indexOf(k);
      if (i < 0) return { error: `${where}: unknown input \`${k}\`` };
      if (v !== true && v !== false && v !== 0 && v !== 1) return { error: `${where}: \`${k}\` must be true, false, 0 or 1` };
      inputs[i] = v === true || v === 1;
    }
    return { event: e, inputs, repeat };
  }

  // The most steps a loaded trace may expand to (`*N` repetitions included).
  const MAX_STEPS = 1000000;

  // Appends `s.repeat` copies of a step (a trace line `E *N`, or `"repeat": N`).
  function pushRepeated(out, s, where) {
    if (out.length + s.repeat > MAX_STEPS) return { error: `${where}: the trace passes ${MAX_STEPS} steps` };
    for (let k = 0; k < s.repeat; k++) out.push({ event: s.event, inputs: s.inputs });
    return null;
  }

  function parseSteps(list) {
    const out = [];
    for (let k = 0; k < list.length; k++) {
      const s = stepOf(list[k], `step ${k + 1}`);
      if (s.error) return s;
      const bad = pushRepeated(out, s, `step ${k + 1}`);
      if (bad) return bad;
    }
    return out;
  }

  function parseTrace(src) {
    const out = [];
    const lines = src.split(/\r?\n/);
    for (let n = 0; n < lines.length; n++) {
      const where = `line ${n + 1}`;
      const t = lines[n].trim();
      if (t === "" || t.startsWith("#")) continue;
      if (t.startsWith("[") || t.startsWith("{")) {
        let v;
        try { v = JSON.parse(t); } catch (e) { return { error: `${where}: invalid JSON: ${e.message}` }; }
        // `equiv --format json` prints {"equivalent": false, "witness": [...], ...}.
        if (v && !Array.isArray(v) && Array.isArray(v.witness)) v = v.witness;
        for (const s of Array.isArray(v) ? v : [v]) {
          const st = stepOf(s, where);
          if (st.error) return st;
          const bad = pushRepeated(out, st, where);
          if (bad) return bad;
        }
        continue;
      }
      const words = [];
      for (const w of t.split(/[ \t]+/)) { if (w.startsWith("#")) break; words.push(w); }
      let repeat = 1;
      const rep = words.length > 1 ? /^\*([0-9]+)$/.exec(words[words.length - 1]) : null;
      if (rep) {
        repeat = Number(rep[1]);
        if (repeat < 1 || repeat > MAX_STEPS) return { error: `${where}: a repetition \`*N\` needs N from 1 to ${MAX_STEPS}` };
        words.pop();
      }
      const e = SIM.events.indexOf(words[0]);
      if (e < 0) return { error: `${where}: unknown event \`${words[0]}\`; events: ${SIM.events.join(", ")}` };
      const inputs = SIM.inputs.map(() => false);
      const seen = new Set();
      for (const w of words.slice(1)) {
        const m = /^([^=]+)=([01])$/.exec(w);
        if (!m) return { error: `${where}: \`${w}\` is not input=0 or input=1` };
        const i = SIM.inputs.indexOf(m[1]);
        if (i < 0) return { error: `${where}: unknown input \`${m[1]}\`` };
        if (seen.has(i)) return { error: `${where}: input \`${m[1]}\` given twice` };
        seen.add(i);
        inputs[i] = m[2] === "1";
      }
      const bad = pushRepeated(out, { event: e, inputs, repeat }, where);
      if (bad) return bad;
    }
    return out;
  }

  function traceText() {
    const lines = [`# trace of ${SIM.name} (${DATA.file}), saved by detent view; replay: detent run FILE --trace THIS`];
    // A run of equal steps is one line with its count (`Tick *250`), as detent prints.
    let last = null;
    let count = 0;
    const flush = () => { if (last !== null) lines.push(count > 1 ? `${last} *${count}` : last); };
    for (const s of history) {
      const words = [SIM.events[s.event]];
      s.inputs.forEach((v, i) => { if (v) words.push(SIM.inputs[i] + "=1"); });
      const line = words.join(" ");
      if (line === last) { count++; continue; }
      flush();
      last = line;
      count = 1;
    }
    flush();
    return lines.join("\n") + "\n";
  }

  $("save-trace").addEventListener("click", () => {
    const blob = new Blob([traceText()], { type: "text/plain" });
    const a = document.createElement("a");
    a.href = URL.createObjectURL(blob);
    a.download = `${SIM.name}.trace`;
    document.body.appendChild(a);
    a.click();
    a.remove();
    setTimeout(() => URL.revokeObjectURL(a.href), 1000);
    $("trace-text").value = traceText();
  });
  $("load-trace").addEventListener("change", (ev) => {
    const f = ev.target.files[0];
    if (!f) return;
    f.text().then((t) => { $("trace-text").value = t; loadText(t, f.name); });
  });
  function loadText(t, what) {
    showError("");
    const steps = parseTrace(t);
    if (steps.error) showError(steps.error); else replay(steps, what);
  }
  $("trace-replay").addEventListener("click", () => loadText($("trace-text").value, "Trace"));
  $("step-button").addEventListener("click", stepFromControls);
  $("back-button").addEventListener("click", () => { back(); show(); });
  $("restart-button").addEventListener("click", () => { pending = []; replayTotal = 0; restart(); show(); });
  $("replay-next").addEventListener("click", replayNext);
  $("zoom-button").addEventListener("click", () => {
    const actual = $("diagram").classList.toggle("actual");
    $("zoom-button").setAttribute("aria-pressed", actual ? "true" : "false");
  });
  $("replay-all").addEventListener("click", () => { while (pending.length) replayNext(); });

  document.addEventListener("keydown", (ev) => {
    const t = ev.target;
    const typing = t instanceof HTMLTextAreaElement || t instanceof HTMLSelectElement ||
      (t instanceof HTMLInputElement && t.type !== "checkbox");
    if (typing || ev.ctrlKey || ev.metaKey || ev.altKey) return;
    if (ev.key === "s") stepFromControls();
    else if (ev.key === "b") { back(); show(); }
    else if (ev.key === "r") $("restart-button").click();
    else if (ev.key === "n") replayNext();
    else if (ev.key === "e") picker.focus();
    else if (ev.key === "z") $("zoom-button").click();
    else if (/^[1-9]$/.test(ev.key) && toggles[Number(ev.key) - 1]) toggles[Number(ev.key) - 1].click();
    else return;
    ev.preventDefault();
  });

  // After a live reload: the trace as far as the new machine still has its events.
  if (DATA.live !== null && DATA.live !== undefined) {
    const key = "detent-view:" + DATA.file;
    const kept = sessionStorage.getItem(key);
    sessionStorage.removeItem(key);
    if (kept) {
      let old = [];
      try { old = JSON.parse(kept); } catch (_) { old = []; }
      let n = 0;
      for (const s of old) {
        const e = SIM.events.indexOf(s.event);
        if (e < 0) break;
        doStep(e, SIM.inputs.map((name) => !!s.inputs[name]), false);
        n++;
      }
      $("live-status").textContent = `reloaded; kept ${n} of ${old.length} trace steps`;
    }
  }
  show();
})();
