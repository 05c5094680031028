"""The listening page: HTML, CSS and JavaScript, served as they are.

The page is the same bytes for every session; everything about a session
comes from ``/api/state`` as JSON and is put into the page with
``textContent`` only. Playback uses the Web Audio API: every clip of a trial
is fetched and decoded first, then all of them start together from the same
offset, each through its own gain; choosing A, B or X only moves the gains
(a 2 ms glide, so the switch is instant and click-free, at the very same
position). An answer is sent the moment "Record answer" is pressed and is
kept in the tab (sessionStorage) until the server confirms it, so a server
restart or a reload loses nothing.
"""

PAGE_HTML = """<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>Blind listening</title>
<link rel="stylesheet" href="/page.css">
<script src="/page.js" defer></script>
</head>
<body data-phase="loading">
<main class="sheet">
  <header class="top">
    <p class="eyebrow">render &middot; blind listening</p>
    <h1 id="heading">Opening the session&hellip;</h1>
    <ol id="progress" class="progress" aria-label="trials"></ol>
    <p id="progress-text" class="quiet"></p>
  </header>

  <section id="caution" class="caution" hidden>
    <h2>Before you listen</h2>
    <p>Turn your playback volume <strong>down</strong> before you begin, then raise it slowly
    to a comfortable level. The clips are matched in loudness, but a clip that clips stays
    loud and harsh even when matched. Rest your ears whenever they tire.</p>
    <p class="quiet">Nothing tells you which design is which until the last trial is answered.
    Each answer is saved the moment you record it; you can close the page and come back.</p>
    <button id="begin" type="button" class="primary" disabled>The volume is down &mdash; begin</button>
  </section>

  <section id="trial" class="trial" hidden>
    <p id="question" class="question"></p>
    <div id="clips" class="clips" role="group" aria-label="clips"></div>
    <div class="transport">
      <button id="play" type="button" class="round" aria-label="play" disabled>&#9654;</button>
      <div id="track" class="track" aria-label="position"><div id="fill" class="fill"></div></div>
      <span id="clock" class="clock">0.0 / 0.0 s</span>
    </div>
    <div class="settings">
      <label><input id="loop" type="checkbox" checked> loop</label>
      <label>level <input id="level" type="range" min="-40" max="0" step="1" value="-20">
        <span id="level-db">&minus;20 dB</span></label>
    </div>
    <fieldset id="answer" class="answer">
      <legend id="answer-legend"></legend>
      <div id="choices" class="choices"></div>
      <label class="comment">Comment (optional)
        <textarea id="comment" maxlength="2000" rows="2"></textarea></label>
      <button id="record" type="button" class="primary" disabled>Record answer</button>
    </fieldset>
    <p id="status" class="status" role="status"></p>
    <p class="quiet"><span id="keys"></span> &middot; start quiet: a clipped clip stays loud even when matched</p>
  </section>

  <section id="done" class="done" hidden>
    <h2>Every trial is answered</h2>
    <p id="result" class="result"></p>
    <p class="quiet">For the table of every trial and the response plot run
    <code>render score</code> on this session folder.</p>
  </section>

  <p id="failure" class="failure" role="alert" hidden></p>
</main>
</body>
</html>
"""

PAGE_CSS = """
:root {
  --paper: #eef1ec; --sheet: #fcfcfa; --ink: #1e2b26; --muted: #5f6d66;
  --moss: #4d7560; --moss-deep: #2f4e3f; --line: #d5dcd5; --amber: #b45a2b; --amber-wash: #fbf1e7;
}
* { box-sizing: border-box; }
body { margin: 0; background: var(--paper); color: var(--ink);
  font: 16px/1.5 system-ui, -apple-system, "Segoe UI", sans-serif; }
.sheet { max-width: 44rem; margin: 2.5rem auto; padding: 2rem 2.25rem; background: var(--sheet);
  border: 1px solid var(--line); border-radius: 14px; box-shadow: 0 2px 14px rgba(30, 43, 38, .06); }
.eyebrow { margin: 0; font-size: .75rem; letter-spacing: .14em; text-transform: uppercase; color: var(--muted); }
h1 { margin: .25rem 0 .75rem; font: 600 1.6rem/1.25 Georgia, "Times New Roman", serif; }
h2 { margin: 0 0 .5rem; font: 600 1.15rem/1.3 Georgia, "Times New Roman", serif; }
.quiet { color: var(--muted); font-size: .9rem; }
.progress { display: flex; flex-wrap: wrap; gap: 4px; margin: 0; padding: 0; list-style: none; }
.progress li { width: 12px; height: 12px; border-radius: 3px; background: var(--line); }
.progress li.answered { background: var(--moss); }
.progress li.now { background: transparent; box-shadow: inset 0 0 0 2px var(--ink); }
.caution { margin-top: 1.5rem; padding: 1rem 1.25rem; background: var(--amber-wash);
  border-left: 4px solid var(--amber); border-radius: 6px; }
.question { font: 1.1rem/1.4 Georgia, "Times New Roman", serif; margin: 1.5rem 0 1rem; }
.clips { display: flex; gap: 1rem; }
.tile { width: 5.5rem; height: 5.5rem; border-radius: 18px; border: 2px solid var(--line); background: var(--sheet);
  color: var(--ink); font: 600 2.1rem/1 Georgia, "Times New Roman", serif; cursor: pointer; }
.tile:hover:not(:disabled) { border-color: var(--moss); }
.tile[aria-pressed="true"] { background: var(--moss-deep); border-color: var(--moss-deep); color: #fff; }
.tile:disabled { opacity: .45; cursor: default; }
.transport { display: flex; align-items: center; gap: .9rem; margin: 1.25rem 0 .5rem; }
.round { width: 2.75rem; height: 2.75rem; border-radius: 50%; border: none; background: var(--ink); color: #fff;
  font-size: 1rem; cursor: pointer; flex: none; }
.round:disabled { opacity: .4; cursor: default; }
.track { flex: 1; height: 8px; border-radius: 4px; background: var(--line); cursor: pointer; position: relative; }
.fill { position: absolute; inset: 0 auto 0 0; width: 0; border-radius: 4px; background: var(--moss); }
.clock { font-variant-numeric: tabular-nums; color: var(--muted); font-size: .9rem; min-width: 7.5rem; text-align: right; }
.settings { display: flex; gap: 1.5rem; align-items: center; color: var(--muted); font-size: .9rem; }
.settings input { accent-color: var(--moss); }
.settings input[type=range] { vertical-align: middle; width: 8rem; accent-color: var(--moss); }
.answer { margin: 1.5rem 0 0; padding: 1rem 1.25rem 1.25rem; border: 1px solid var(--line); border-radius: 10px; }
.answer legend { padding: 0 .4rem; font-weight: 600; }
.choices { display: flex; flex-wrap: wrap; gap: .6rem; margin-bottom: .9rem; }
.choice { padding: .55rem 1.1rem; border-radius: 999px; border: 2px solid var(--line); background: var(--sheet);
  color: var(--ink); font: inherit; cursor: pointer; }
.choice[aria-pressed="true"] { border-color: var(--moss-deep); background: #e4ece6; }
.comment { display: block; font-size: .9rem; color: var(--muted); margin-bottom: .9rem; }
.comment textarea { display: block; width: 100%; margin-top: .25rem; padding: .5rem; font: inherit; color: var(--ink);
  border: 1px solid var(--line); border-radius: 6px; resize: vertical; }
.primary { padding: .6rem 1.3rem; border: none; border-radius: 8px; background: var(--moss-deep); color: #fff;
  font: 600 1rem/1.2 system-ui, sans-serif; cursor: pointer; }
.primary:disabled { background: #a9b7ae; cursor: default; }
.status { min-height: 1.5rem; color: var(--muted); }
.status.warn { color: var(--amber); }
.done { margin-top: 1.5rem; }
.result { font: 1.1rem/1.5 Georgia, "Times New Roman", serif; }
.failure { margin-top: 1rem; padding: .75rem 1rem; border-radius: 6px; background: var(--amber-wash); color: var(--amber); }
code { font-size: .9em; }
"""

PAGE_JS = r"""
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
"""
