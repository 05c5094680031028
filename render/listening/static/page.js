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
    if (!r.ok) throw new Error(url + " answered " + r.status);
    return r.json();
  }

  function drawProgress() {
    const n = S.plan.trials.length;
    const ol = el("progress");
    ol.replaceChildren();
    for (let i = 0; i < n; i++) {
      const li = document.createElement("li");
      if (i < S.answered) li.className = "answered";
      else if (i === S.index && S.answered < n) li.className = "now";
      ol.appendChild(li);
    }
    el("progress-text").textContent = S.answered + " of " + n + " answered";
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
    for (const b of el("clips").children) b.setAttribute("aria-pressed", String(b.dataset.slot === slot));
    body.dataset.active = slot;
  }

  function drawTransport() {
    const d = duration(), p = position();
    el("fill").style.width = (d ? (100 * p) / d : 0) + "%";
    el("clock").textContent = p.toFixed(1) + " / " + d.toFixed(1) + " s";
    el("play").innerHTML = S.playing ? "&#10074;&#10074;" : "&#9654;";
    el("play").setAttribute("aria-label", S.playing ? "stop" : "play");
    body.dataset.playing = String(S.playing);
  }

  function tick() { drawTransport(); if (S.playing) requestAnimationFrame(tick); }

  // ---- trials --------------------------------------------------------------

  function buildTrial() {
    const abx = S.plan.method === "abx";
    const n = S.plan.trials.length;
    el("heading").textContent = "Trial " + (S.index + 1) + " of " + n;
    el("question").textContent = abx
      ? "X is the same recording as A or as B. Listen to all three, as often as you like, and say which."
      : "Listen to A and B, as often as you like, and say which you prefer, if either.";
    el("answer-legend").textContent = abx ? "X sounds like" : "I prefer";
    el("keys").textContent = abx ? "Keys: 1, 2, 3 choose A, B, X; space plays and stops" : "Keys: 1, 2 choose A, B; space plays and stops";
    const clips = el("clips");
    clips.replaceChildren();
    for (const slot of slotsOf()) {
      const b = document.createElement("button");
      b.type = "button"; b.className = "tile"; b.textContent = slot; b.dataset.slot = slot; b.disabled = true;
      b.setAttribute("aria-pressed", "false");
      b.addEventListener("click", () => choose(slot));
      clips.appendChild(b);
    }
    const choices = el("choices");
    choices.replaceChildren();
    const options = abx ? [["A", "X is A"], ["B", "X is B"]] : [["A", "A"], ["B", "B"], ["none", "No preference"]];
    for (const [value, label] of options) {
      const b = document.createElement("button");
      b.type = "button"; b.className = "choice"; b.textContent = label; b.dataset.answer = value;
      b.setAttribute("aria-pressed", "false");
      b.addEventListener("click", () => pick(value));
      choices.appendChild(b);
    }
    el("comment").value = "";
    S.choice = null; S.active = "A"; S.offset = 0;
    el("record").disabled = true;
  }

  function pick(value) {
    S.choice = value;
    for (const b of el("choices").children) b.setAttribute("aria-pressed", String(b.dataset.answer === value));
    el("record").disabled = S.busy || !S.buffers;
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
    for (const b of el("clips").children) b.disabled = false;
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
    el("record").disabled = true;
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

  async function finish() {
    if (S.ctx) stop();
    S.index = S.plan.trials.length;
    drawProgress();
    el("trial").hidden = true;
    el("caution").hidden = true;
    el("done").hidden = false;
    el("heading").textContent = "Session complete";
    phase("done");
    try {
      const r = await getJSON("/api/result");
      const names = r.designs;
      let text;
      if (r.abx) {
        text = "X was matched correctly in " + r.abx.correct + " of " + r.abx.total + " trials; p = " + r.abx.p_value.toFixed(4) +
          " (one-sided exact binomial, chance 1/2). " +
          (r.abx.distinguished ? "Guessing alone rarely scores this well: the two designs were told apart."
                               : "Guessing could score this well: no audible difference was shown.");
      } else {
        const c = r.preference.counts;
        const times = (n) => (n === 1 ? "once" : n + " times");
        text = "Preferred " + names[0] + " " + times(c[names[0]]) + ", " + names[1] + " " + times(c[names[1]]) +
          "; no preference " + times(c["no preference"]) + ". p = " + r.preference.p_value.toFixed(4) +
          " (two-sided exact binomial of the decided answers).";
      }
      if (r.abx) text += " The designs were " + names[0] + " and " + names[1] + ".";
      el("result").textContent = text;
      body.dataset.result = "shown";
    } catch (e) {
      el("result").textContent = "The result could not be read from the server; run render score.";
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

  function setLevel() {
    const db = Number(el("level").value);
    el("level-db").textContent = (db < 0 ? "\u2212" : "") + Math.abs(db) + " dB";
    if (S.master) S.master.gain.setTargetAtTime(Math.pow(10, db / 20), S.ctx.currentTime, 0.01);
  }

  function wire() {
    el("begin").addEventListener("click", begin);
    el("play").addEventListener("click", () => { if (!S.buffers) return; if (S.playing) stop(); else start(S.offset >= duration() ? 0 : S.offset); });
    el("record").addEventListener("click", record);
    el("level").addEventListener("input", setLevel);
    el("loop").addEventListener("change", () => { if (S.playing) start(position()); });
    el("track").addEventListener("click", (ev) => {
      if (!S.buffers) return;
      const box = el("track").getBoundingClientRect();
      const at = Math.max(0, Math.min(1, (ev.clientX - box.left) / box.width)) * duration();
      if (S.playing) start(at); else { S.offset = at; drawTransport(); }
    });
    document.addEventListener("keydown", (ev) => {
      const tag = (ev.target && ev.target.tagName) || "";
      if (tag === "TEXTAREA" || tag === "INPUT" || !S.buffers || body.dataset.phase !== "ready") return;
      const map = { "1": "A", "2": "B", "3": "X", a: "A", b: "B", x: "X" };
      if (map[ev.key.toLowerCase()]) { choose(map[ev.key.toLowerCase()]); ev.preventDefault(); }
      else if (ev.key === " ") { el("play").click(); ev.preventDefault(); }
    });
  }

  async function boot() {
    wire();
    try { S.plan = await getJSON("/api/state"); } catch (e) { fail("Could not reach the session server. Is `render listen` still running?"); return; }
    S.answered = S.plan.answered.length;
    S.index = S.answered;
    drawProgress();
    if (S.plan.complete) return finish();
    el("heading").textContent = S.answered ? "Welcome back: trial " + (S.index + 1) + " of " + S.plan.trials.length : "A blind comparison of two designs";
    el("caution").hidden = false;
    el("begin").disabled = false;
    phase("caution");
  }

  boot();
})();
