"use strict";
(function () {
  const el = (id) => document.getElementById(id);
  const body = document.body;
  const S = {
    plan: null, answered: 0, index: 0, ctx: null, master: null, cache: new Map(),
    buffers: null, sources: null, gains: null, playing: false, offset: 0, startedAt: 0,
    active: "A", choice: null, busy: false,
  };
  const slotsOf = () => (S.plan.method === "abx" ? ["A", "B", "X"] : ["A", "B"]);
  const pendingKey = () => "render-pending-" + S.plan.session;
  const sleep = (ms) => new Promise((r) => setTimeout(r, ms));

  function phase(p) { body.dataset.phase = p; }
  function status(text, warn) { const s = el("status"); s.textContent = text; s.classList.toggle("warn", !!warn); }
  function fail(text) { const f = el("failure"); f.textContent = text; f.hidden = false; phase("error"); }

  async function getJSON(url) {
    const r = await fetch(url, { cache: "no-store" });
    if (!r.ok) {
      let why = "";
      try { why = (await r.json()).error || ""; } catch (e) { why = ""; }
      throw new Error(why || url + " answered " + r.status);
    }
    return r.json();
  }

  function drawProgress() {
    const n = S.plan.trials.length;
    const ol = el("ruler");
    ol.replaceChildren();
    for (let i = 0; i < n; i++) {
      const li = document.createElement("li");
      if (i < S.answered) li.className = "answered";
      else if (i === S.index && S.answered < n) li.className = "current";
      ol.appendChild(li);
    }
    const left = n - S.answered;
    el("tally").textContent = S.answered + " answered \u00b7 " + (left ? left + " to go" : "none to go");
    body.dataset.answered = String(S.answered);
  }

  // ---- audio ---------------------------------------------------------------

  function loadTrial(i) {
    if (!S.cache.has(i)) {
      const clips = S.plan.trials[i].clips;
      const job = Promise.all(slotsOf().map(async (slot) => {
        const r = await fetch("/clip/" + clips[slot], { cache: "no-store" });
        if (!r.ok) throw new Error("clip " + slot + " answered " + r.status);
        return [slot, await S.ctx.decodeAudioData(await r.arrayBuffer())];
      })).then((pairs) => Object.fromEntries(pairs));
      job.catch(() => S.cache.delete(i));
      S.cache.set(i, job);
    }
    return S.cache.get(i);
  }

  const duration = () => (S.buffers ? S.buffers.A.duration : 0);
  const looping = () => el("loop").checked;

  function position() {
    if (!S.playing) return S.offset;
    const d = duration();
    let p = S.offset + Math.max(0, S.ctx.currentTime - S.startedAt);
    if (looping()) p = p % d;
    return Math.min(p, d);
  }

  function stopSources() {
    if (S.sources) for (const k in S.sources) { S.sources[k].onended = null; try { S.sources[k].stop(); } catch (e) { /* not started */ } }
    S.sources = null; S.gains = null;
  }

  function start(offset) {
    stopSources();
    const t0 = S.ctx.currentTime + 0.03;
    const sources = {}, gains = {};
    for (const slot of slotsOf()) {
      const src = S.ctx.createBufferSource();
      src.buffer = S.buffers[slot];
      src.loop = looping();
      const g = S.ctx.createGain();
      g.gain.value = slot === S.active ? 1 : 0;
      src.connect(g).connect(S.master);
      src.start(t0, offset);
      sources[slot] = src; gains[slot] = g;
    }
    sources.A.onended = () => { if (S.sources === sources) { S.playing = false; S.offset = 0; stopSources(); drawTransport(); } };
    S.sources = sources; S.gains = gains; S.startedAt = t0; S.offset = offset; S.playing = true;
    drawTransport();
    requestAnimationFrame(tick);
  }

  function stop() { S.offset = position(); stopSources(); S.playing = false; drawTransport(); }

  function choose(slot) {
    if (!S.buffers || !slotsOf().includes(slot)) return;
    S.active = slot;
    if (S.gains) for (const k in S.gains) S.gains[k].gain.setTargetAtTime(k === slot ? 1 : 0, S.ctx.currentTime, 0.002);
    for (const b of el("stage").querySelectorAll(".listen")) b.setAttribute("aria-pressed", String(b.dataset.slot === slot));
    body.dataset.active = slot;
  }

  function drawTransport() {
    const d = duration(), p = position();
    el("fill").style.width = (d ? (100 * p) / d : 0) + "%";
    el("clock").textContent = p.toFixed(1) + " s of " + d.toFixed(1) + " s";
    el("play").textContent = S.playing ? "Pause" : "Play";
    body.dataset.playing = String(S.playing);
  }

  function tick() { drawTransport(); if (S.playing) requestAnimationFrame(tick); }

  // ---- trials --------------------------------------------------------------

  const WORDS = {
    abx: {
      heading: "Where does X belong?",
      task: "X is A or B played again, chosen at random. Switch between the three as often as you like, " +
            "at the same moment in the phrase, and mark the one X copies.",
      pick: "same as X",
      keys: "Keys: \u2190 A \u00b7 \u2191 X \u00b7 \u2192 B \u00b7 P play or pause \u00b7 Home back to the start \u00b7 " +
            "Shift+\u2190 or Shift+\u2192 marks the side X copies, then Enter saves",
      marked: (v) => "Marked: X copies " + v + ".",
    },
    preference: {
      heading: "Which do you prefer?",
      task: "A and B are the two designs, in a random order. Switch between them as often as you like, " +
            "at the same moment in the phrase, and mark the one you prefer, or neither.",
      pick: "prefer this",
      keys: "Keys: \u2190 A \u00b7 \u2192 B \u00b7 P play or pause \u00b7 Home back to the start \u00b7 " +
            "Shift+\u2190 or Shift+\u2192 marks your preference, Shift+\u2193 neither, then Enter saves",
      marked: (v) => (v === "none" ? "Marked: no preference." : "Marked: you prefer " + v + "."),
    },
  };
  const words = () => WORDS[S.plan.method];

  function card(slot, role, pickValue, pickLabel) {
    const box = document.createElement("article");
    box.className = "card";
    if (slot) {
      box.dataset.slot = slot;
      const b = document.createElement("button");
      b.type = "button"; b.className = "listen"; b.textContent = slot; b.dataset.slot = slot; b.disabled = true;
      b.setAttribute("aria-pressed", "false");
      b.setAttribute("aria-label", "listen to " + slot);
      b.addEventListener("click", () => choose(slot));
      box.appendChild(b);
    }
    if (role) {
      const r = document.createElement("p");
      r.className = "role"; r.textContent = role;
      box.appendChild(r);
    }
    if (pickValue) {
      const p = document.createElement("button");
      p.type = "button"; p.className = "pick"; p.textContent = pickLabel; p.dataset.answer = pickValue;
      p.setAttribute("aria-pressed", "false");
      p.addEventListener("click", () => pick(pickValue));
      box.appendChild(p);
    }
    return box;
  }

  function buildTrial() {
    const abx = S.plan.method === "abx";
    const w = words();
    el("heading").textContent = w.heading;
    el("task").textContent = w.task;
    el("keys").textContent = w.keys;
    const stage = el("stage");
    stage.replaceChildren();
    delete stage.dataset.picked;
    stage.appendChild(card("A", "known", "A", w.pick));
    if (abx) {
      const x = card("X", "hidden: A or B", null, null);
      x.classList.add("hidden-one");
      stage.appendChild(x);
    } else {
      const mid = card(null, null, "none", "no preference");
      mid.classList.add("middle");
      stage.appendChild(mid);
    }
    stage.appendChild(card("B", "known", "B", w.pick));
    el("picked").textContent = "Nothing marked yet.";
    el("comment").value = "";
    S.choice = null; S.active = "A"; S.offset = 0;
    el("save").disabled = true;
  }

  function pick(value) {
    if (!S.plan || !["A", "B", "none"].includes(value) || (value === "none" && S.plan.method === "abx")) return;
    S.choice = value;
    const stage = el("stage");
    stage.dataset.picked = value;
    for (const b of stage.querySelectorAll(".pick")) b.setAttribute("aria-pressed", String(b.dataset.answer === value));
    for (const c of stage.querySelectorAll(".card")) c.dataset.sidePicked = String(c.dataset.slot === value);
    el("picked").textContent = words().marked(value);
    body.dataset.picked = value;
    el("save").disabled = S.busy || !S.buffers;
  }

  async function showTrial() {
    stop();
    S.buffers = null;
    phase("loading");
    buildTrial();
    drawProgress();
    el("play").disabled = true;
    status("Loading the clips\u2026");
    const i = S.index;
    let buffers;
    try { buffers = await loadTrial(i); } catch (e) { fail("Could not load the clips (" + e.message + "). Is `render listen` still running? Reload to try again."); return; }
    if (i !== S.index) return;
    for (const k of Array.from(S.cache.keys())) if (k < i) S.cache.delete(k);
    S.buffers = buffers;
    for (const b of el("stage").querySelectorAll(".listen")) b.disabled = false;
    el("play").disabled = false;
    choose("A");
    drawTransport();
    status("");
    body.dataset.trial = String(i);
    body.dataset.decoded = String(Object.keys(buffers).length);
    body.dataset.duration = duration().toFixed(3);
    phase("ready");
    if (i + 1 < S.plan.trials.length) loadTrial(i + 1).catch(() => {});
  }

  class Refused extends Error {}

  async function send(answer) {
    const text = JSON.stringify(answer);
    for (let attempt = 0; ; attempt++) {
      try {
        const r = await fetch("/api/answer", { method: "POST", headers: { "Content-Type": "application/json" }, body: text });
        const reply = await r.json().catch(() => ({}));
        if (r.ok) return reply;
        if (r.status >= 400 && r.status < 500) throw new Refused(reply.error || String(r.status));
      } catch (e) {
        if (e instanceof Refused) throw e;
      }
      status("Not saved yet: the server did not answer. Trying again\u2026 (the answer is kept in this tab)", true);
      body.dataset.saving = "retrying";
      await sleep(Math.min(8000, 400 * 2 ** attempt));
    }
  }

  async function record() {
    if (S.busy || S.choice === null || !S.buffers) return;
    const answer = { trial: S.index, answer: S.choice, comment: el("comment").value.slice(0, 2000) };
    await deliver(answer);
  }

  async function deliver(answer) {
    S.busy = true;
    el("save").disabled = true;
    delete body.dataset.picked;
    phase("saving");
    status("Saving\u2026");
    try { sessionStorage.setItem(pendingKey(), JSON.stringify(answer)); } catch (e) { /* storage off: the retry loop still holds it */ }
    try {
      await send(answer);
    } catch (e) {
      status("The server refused the answer: " + e.message + ". Reloading the session\u2026", true);
      await sleep(600);
    }
    try { sessionStorage.removeItem(pendingKey()); } catch (e) { /* ignore */ }
    delete body.dataset.saving;
    S.busy = false;
    await resync();
  }

  async function stateRetrying() {
    for (let attempt = 0; ; attempt++) {
      try { return await getJSON("/api/state"); } catch (e) { /* server restarting: try again */ }
      status("The server did not answer. Trying again\u2026 (is `render listen` still running?)", true);
      body.dataset.saving = "retrying";
      await sleep(Math.min(8000, 400 * 2 ** attempt));
    }
  }

  async function resync() {
    const st = await stateRetrying();
    delete body.dataset.saving;
    S.plan = st;
    S.answered = st.answered.length;
    S.index = S.answered;
    drawProgress();
    if (st.complete) return finish();
    status("Answer " + S.answered + " saved.");
    await showTrial();
  }

  function outcomeCell(text, cls, label) {
    const li = document.createElement("li");
    li.textContent = text; li.className = cls; li.title = label; li.setAttribute("aria-label", label);
    return li;
  }

  async function finish() {
    if (S.ctx) stop();
    S.index = S.plan.trials.length;
    drawProgress();
    el("trial").hidden = true;
    el("caution").hidden = true;
    el("done").hidden = false;
    el("heading").textContent = "The outcome";
    phase("done");
    try {
      const r = await getJSON("/api/result");
      const names = r.designs;
      const strip = el("outcome");
      strip.replaceChildren();
      const figure = el("figure");
      figure.replaceChildren();
      const small = document.createElement("small");
      let text;
      if (r.abx) {
        const s = r.abx;
        figure.append(s.correct + " / " + s.total);
        small.textContent = "times X was placed with the clip it copies";
        for (const row of r.table) {
          strip.appendChild(outcomeCell(String(row.trial), row.correct ? "right" : "wrong", "trial " + row.trial + ": " + (row.correct ? "right" : "wrong")));
        }
        text = "X placed right in " + s.correct + " of " + s.total + " trials. Guessing alone does this well or better " +
          s.percent_shown + " of the time (" + s.p_shown + ", one-sided exact binomial, chance \u00bd in each trial). " +
          (s.distinguished
            ? "That is under " + s.alpha_shown + ": the two designs were told apart."
            : "That is not under " + s.alpha_shown + ": these answers could be guesses, so no audible difference was shown (which does not prove there is none).") +
          " The designs were " + names[0] + " and " + names[1] + ".";
      } else {
        const s = r.preference, c = s.counts;
        figure.append(c[names[0]] + " : " + c[names[1]]);
        small.textContent = names[0] + " : " + names[1] + ", and " + c["no preference"] + " without a preference";
        for (const row of r.table) {
          const which = row.preferred === names[0] ? "first" : row.preferred === names[1] ? "second" : "";
          strip.appendChild(outcomeCell(String(row.trial), which, "trial " + row.trial + ": " + (row.preferred || "no preference")));
        }
        const times = (n) => (n === 1 ? "once" : n + " times");
        text = "You preferred " + names[0] + " " + times(c[names[0]]) + " (blue) and " + names[1] + " " + times(c[names[1]]) +
          " (copper); no preference: " + times(c["no preference"]) + ". " +
          (s.p_value === null ? s.p_value_reason.charAt(0).toUpperCase() + s.p_value_reason.slice(1) + "." :
            "An even split of the decided answers gives a lean at least this strong " +
            s.percent_shown + " of the time (" + s.p_shown + ", two-sided exact binomial).");
      }
      figure.appendChild(small);
      el("result").textContent = text;
      body.dataset.result = "shown";
    } catch (e) {
      el("result").textContent = "The outcome could not be read from the server (" + e.message + "); run render score on the session folder.";
    }
  }

  // ---- start ---------------------------------------------------------------

  async function begin() {
    el("begin").disabled = true;
    el("caution").hidden = true;
    el("trial").hidden = false;
    const Ctx = window.AudioContext || window.webkitAudioContext;
    S.ctx = new Ctx();
    S.master = S.ctx.createGain();
    setLevel();
    S.master.connect(S.ctx.destination);
    let pending = null;
    try { pending = JSON.parse(sessionStorage.getItem(pendingKey()) || "null"); } catch (e) { pending = null; }
    if (pending && pending.trial === S.index) { await deliver(pending); return; }
    await showTrial();
  }

  function seek(at) {
    if (!S.buffers) return;
    if (S.playing) start(at); else { S.offset = at; drawTransport(); }
  }

  // The level control and what is heard agree at all times. At the start the page sets the control to 20 dB down
  // over anything a browser restored into it; whenever the page is shown again (Back and Forward: the page from the
  // back/forward cache, or a form filled in again) the gain follows the control as it stands. The controls also say
  // autocomplete="off", so that browsers do not restore them at all.
  const START_LEVEL_DB = -20;

  function setLevel() {
    const db = Number(el("level").value);
    el("level-db").textContent = (db < 0 ? "\u2212" : "") + Math.abs(db) + " dB";
    if (S.master) {
      S.master.gain.setTargetAtTime(Math.pow(10, db / 20), S.ctx.currentTime, 0.01);
      body.dataset.gainDb = String(db);  // the gain what is heard goes through, for the browser tests
    }
  }

  function wire() {
    el("begin").addEventListener("click", begin);
    el("play").addEventListener("click", () => { if (!S.buffers) return; if (S.playing) stop(); else start(S.offset >= duration() ? 0 : S.offset); });
    el("save").addEventListener("click", record);
    el("level").addEventListener("input", setLevel);
    el("loop").addEventListener("change", () => { if (S.playing) start(position()); });
    window.addEventListener("pageshow", () => { setLevel(); if (S.playing) start(position()); });
    el("track").addEventListener("click", (ev) => {
      if (!S.buffers) return;
      const box = el("track").getBoundingClientRect();
      seek(Math.max(0, Math.min(1, (ev.clientX - box.left) / box.width)) * duration());
    });
    // keys laid out as the cards are: left A, up the hidden X, right B; Shift marks a side
    document.addEventListener("keydown", (ev) => {
      const tag = (ev.target && ev.target.tagName) || "";
      if (tag === "TEXTAREA" || tag === "INPUT" || !S.buffers || body.dataset.phase !== "ready") return;
      if (ev.altKey || ev.ctrlKey || ev.metaKey) return;
      const abx = S.plan.method === "abx";
      if (ev.shiftKey) {
        const mark = { ArrowLeft: "A", ArrowRight: "B", ArrowDown: abx ? null : "none" }[ev.key];
        if (mark) { pick(mark); el("save").focus(); ev.preventDefault(); }
        return;
      }
      const listen = { ArrowLeft: "A", ArrowRight: "B", ArrowUp: abx ? "X" : null }[ev.key];
      if (listen) { choose(listen); ev.preventDefault(); }
      else if (ev.key === "p" || ev.key === "P") { el("play").click(); ev.preventDefault(); }
      else if (ev.key === "Home") { seek(0); ev.preventDefault(); }
    });
  }

  async function boot() {
    el("level").value = String(START_LEVEL_DB);
    el("loop").checked = true;
    setLevel();
    wire();
    try { S.plan = await getJSON("/api/state"); } catch (e) { fail("Could not reach the session server. Is `render listen` still running?"); return; }
    S.answered = S.plan.answered.length;
    S.index = S.answered;
    drawProgress();
    if (S.plan.complete) return finish();
    el("heading").textContent = S.answered ? "Picking up where you left off" : "Two designs, their names hidden";
    el("caution").hidden = false;
    el("begin").disabled = false;
    phase("caution");
  }

  boot();
})();
