"use strict";
// The comparison page of render (clips, bias, fit runs; and render watch, live).
//
// Every clip is decoded to an AudioBuffer on one AudioContext, and all of them
// play at once from the same frame, each through its own gain: picking a design
// only moves the gains (a short linear crossfade), so the switch lands on the
// very same sample. A new clip (render watch) joins the others at the frame
// they have reached. Loudness is matched by attenuation only, from each clip's
// BS.1770 integrated loudness as its run measured it, and every clip is lowered
// together when one's true peak would pass the ceiling (-1 dBTP) less its margin (0.7 dB: what a 4x
// true-peak meter can miss between its points), true_peak_aim_dbtp in the page's data.
(function () {
  const el = (id) => document.getElementById(id);
  const body = document.body;
  const FADE_S = 0.012; // the crossfade of a switch, and of a repeat's wrap from its end to its start, s
  const FADED = new WeakSet(); // clips whose ends fade (Player.loopOf): once each
  const LEAD_S = 0.025; // changes are scheduled this far ahead of the audio clock, s
  const SVG = "http://www.w3.org/2000/svg";
  const START_VOLUME_DB = -20; // the page starts this far down, whatever a browser put back in the slider (the caution says so)
  const S = {
    data: null, ctx: null, player: null, buffers: new Map(), duration: 0,
    picked: 0, useBefore: false, matched: true, reference: 0, volumeDb: START_VOLUME_DB,
    swaps: 0, drag: null, started: false,
  };

  const dbToGain = (db) => Math.pow(10, db / 20);
  const sleep = (ms) => new Promise((r) => setTimeout(r, ms));
  function phase(p) { body.dataset.phase = p; }
  function fail(text) { const f = el("failure"); f.textContent = text; f.hidden = false; phase("error"); }
  function signed(x, unit) {
    const a = Math.abs(x) < 0.05 ? 0 : x;
    return (a > 0 ? "+" : a < 0 ? "\u2212" : "\u00b1") + Math.abs(a).toFixed(1) + (unit || " dB");
  }

  // ---- gains that change smoothly --------------------------------------------

  class Ramp {
    // an AudioParam moved by linear ramps; remembers its last ramp so a new one starts where it is
    constructor(param, value) { this.param = param; this.from = value; this.to = value; this.t0 = 0; this.t1 = 0; param.value = value; }
    at(t) {
      if (t >= this.t1) return this.to;
      if (t <= this.t0) return this.from;
      return this.from + ((this.to - this.from) * (t - this.t0)) / (this.t1 - this.t0);
    }
    go(t, to, fade) {
      const now = this.at(t), p = this.param;
      if (t < this.t1 && p.cancelAndHoldAtTime) p.cancelAndHoldAtTime(t); else p.cancelScheduledValues(t);
      p.setValueAtTime(now, t);
      p.linearRampToValueAtTime(to, t + fade);
      this.from = now; this.to = to; this.t0 = t; this.t1 = t + fade;
    }
  }

  // ---- the player: every voice in lockstep -------------------------------------

  class Player {
    constructor(ctx, volumeDb) {
      this.ctx = ctx;
      this.master = ctx.createGain();
      this.masterRamp = new Ramp(this.master.gain, dbToGain(volumeDb));
      this.master.connect(ctx.destination);
      this.voices = new Map();
      this.playing = false; this.t0 = 0; this.o0 = 0; this.active = null;
      this.duration = 0; this.span = [0, 0];
    }
    frames(t) { return Math.round(t * this.ctx.sampleRate) / this.ctx.sampleRate; }
    when() { const sr = this.ctx.sampleRate; return Math.ceil((this.ctx.currentTime + LEAD_S) * sr) / sr; }
    setDuration(d) { this.duration = d; this.span = [0, d]; if (this.o0 >= d) this.o0 = 0; }
    wrap(p) {
      const a = this.span[0], b = this.span[1];
      if (p < b) return Math.max(0, p);
      return a + ((p - a) % (b - a));
    }
    position(t) {
      if (!this.playing) return this.o0;
      const at = t === undefined ? this.ctx.currentTime : t;
      return at <= this.t0 ? this.o0 : this.wrap(this.o0 + (at - this.t0));
    }
    add(id, buffer, db) {
      const g = this.ctx.createGain();
      const v = { id, buffer, db, gain: g, ramp: new Ramp(g.gain, 0), src: null, srcRamp: null, loop: null };
      g.connect(this.master);
      this.voices.set(id, v);
      let t = null;
      if (this.playing) { t = this.when(); this.startVoice(v, t, this.position(t), false); }
      return t;
    }
    remove(id) {
      const v = this.voices.get(id);
      if (!v) return;
      this.voices.delete(id);
      if (v.src) this.stopSource(v, this.when());
    }
    clear() { for (const id of Array.from(this.voices.keys())) this.remove(id); }
    // What a voice loops over the repeated stretch [a, b), made so that the wrap from b back to a is a crossfade
    // like a switch's (linear, FADE_S), not a jump (a click):
    // - a stretch with FADE_S of clip before it: a copy of the stretch whose last FADE_S fade out while the FADE_S
    //   of the clip just before a fade in, so that it runs into a as the clip itself does; the period stays b - a;
    // - one from (nearly) the clip's start, the whole clip among them, has nothing before it to fade to: its last
    //   FADE_S fade out and its first FADE_S fade in (the whole clip's in place: no second copy of every clip).
    // Returns {buffer, start}: the buffer looped whole, and the clip time (s) of its first sample.
    loopOf(v) {
      const x = v.buffer, sr = x.sampleRate;
      const a = Math.round(this.span[0] * sr), b = Math.min(x.length, Math.round(this.span[1] * sr));
      const n = Math.min(Math.round(FADE_S * sr), Math.floor((b - a) / 2));
      const w = (i) => (i + 0.5) / n; // the fade-in's weight at its sample i; the fade-out's is 1 - w(i)
      if (a === 0 && b === x.length) {
        if (!FADED.has(x)) {
          const y = x.getChannelData(0);
          for (let i = 0; i < n; i++) { y[i] *= w(i); y[b - n + i] *= 1 - w(i); }
          FADED.add(x);
        }
        return { buffer: x, start: 0 };
      }
      const key = a + "-" + b;
      if (v.loop && v.loop.key === key && v.loop.of === x) return v.loop;
      const src = x.getChannelData(0);
      const out = this.ctx.createBuffer(1, b - a, sr);
      const y = out.getChannelData(0);
      y.set(src.subarray(a, b));
      for (let i = 0; i < n; i++) {
        const before = a >= n ? src[a - n + i] : 0; // the clip just before a, or silence
        y[b - a - n + i] = y[b - a - n + i] * (1 - w(i)) + before * w(i);
        if (a < n) y[i] *= w(i);
      }
      v.loop = { key, of: x, buffer: out, start: a / sr };
      return v.loop;
    }
    startVoice(v, t, offset, fadeIn) {
      const src = this.ctx.createBufferSource();
      const looped = this.loopOf(v);
      src.buffer = looped.buffer;
      src.loop = true; // the whole buffer
      const g = this.ctx.createGain();
      v.srcRamp = new Ramp(g.gain, fadeIn ? 0 : 1);
      if (fadeIn) v.srcRamp.go(t, 1, FADE_S);
      src.connect(g);
      g.connect(v.gain);
      src.start(t, Math.max(0, offset - looped.start));
      v.src = src;
    }
    stopSource(v, t) {
      const src = v.src;
      v.srcRamp.go(t, 0, FADE_S);
      src.stop(t + FADE_S + 0.002);
      src.onended = () => { try { src.disconnect(); } catch (e) { /* gone already */ } };
      v.src = null; v.srcRamp = null;
    }
    start(offset) {
      const t = this.when();
      for (const v of this.voices.values()) if (v.src) this.stopSource(v, t);
      this.t0 = t;
      this.o0 = Math.min(Math.max(0, this.frames(offset)), Math.max(0, this.span[1] - 1 / this.ctx.sampleRate));
      this.playing = true;
      for (const v of this.voices.values()) {
        this.startVoice(v, t, this.o0, true);
        v.ramp.go(t, v.id === this.active ? dbToGain(v.db) : 0, FADE_S);
      }
      return t;
    }
    stop() {
      const t = this.when();
      this.o0 = this.position(t);
      for (const v of this.voices.values()) if (v.src) this.stopSource(v, t);
      this.playing = false;
    }
    pick(id) {
      const t = this.when();
      this.active = id;
      for (const v of this.voices.values()) v.ramp.go(t, v.id === id ? dbToGain(v.db) : 0, FADE_S);
      return t;
    }
    setGain(id, db) {
      const v = this.voices.get(id);
      if (!v) return;
      v.db = db;
      if (id === this.active) v.ramp.go(this.when(), dbToGain(db), FADE_S);
    }
    setSpan(a, b) {
      const p = this.position(this.when());
      this.span = [this.frames(a), this.frames(b)];
      const inside = (x) => x >= this.span[0] && x < this.span[1];
      if (this.playing) this.start(inside(p) ? p : this.span[0]);
      else this.o0 = inside(this.o0) ? this.o0 : this.span[0];
    }
    seek(p) { if (this.playing) this.start(p); else this.o0 = this.frames(p); }
    setVolume(db) { this.masterRamp.go(this.when(), dbToGain(db), 0.02); }
  }

  // ---- which clip is heard, and at what gain ----------------------------------

  const entries = () => S.data.designs;
  const COMPARE_KEY = "c"; // picks the comparison pickup (--compare), whatever its place: 1-9 and 0 are the designs'
  const compareIndex = () => entries().findIndex((d) => d.role === "compare");
  // step through every entry in page order, wrapping at the ends: how designs past the tenth are reached by key
  const NEXT_KEY = ".";
  const PREVIOUS_KEY = ",";
  function stepDesign(by) { const n = entries().length; pickDesign((((S.picked + by) % n) + n) % n); }
  // the key that picks entry i: a digit for the first ten designs, COMPARE_KEY for the comparison pickup
  function keyOf(i) { return entries()[i].role === "compare" ? COMPARE_KEY : i < 10 ? String((i + 1) % 10) : ""; }
  function heardEntry() { const d = entries()[S.picked]; return S.useBefore && d.before ? d.before : d; }
  const heardId = () => heardEntry().clip;
  function voiceEntries() {
    const out = [];
    for (const d of entries()) { out.push(d); if (d.before) out.push(d.before); }
    return out.filter((v) => S.buffers.has(v.clip));
  }

  // dB applied to each clip's decoded samples: the run's full scale, less the match, less the
  // common lowering that keeps every true peak at or below the ceiling. Only clips within
  // match_window_lu of the loudest are matched (turned down to the quietest of them): a clip
  // further down plays at its true level rather than pull every other clip down to it, and so
  // does a clip whose coils cancel the strings (strings_cancel: its response is zero; only hum)
  function levels() {
    const vs = voiceEntries();
    const fsDb = 20 * Math.log10(S.data.volts_full_scale);
    const measured = vs.filter((v) => v.loudness !== null && !v.strings_cancel).map((v) => v.loudness);
    const loudest = measured.length ? Math.max.apply(null, measured) : 0;
    const inWindow = (v) => v.loudness !== null && !v.strings_cancel && v.loudness >= loudest - S.data.match_window_lu;
    const matchable = vs.filter(inWindow).map((v) => v.loudness);
    const quietest = matchable.length ? Math.min.apply(null, matchable) : 0;
    const match = new Map();
    const tooQuiet = new Set();
    for (const v of vs) {
      match.set(v.clip, S.matched && inWindow(v) ? quietest - v.loudness : 0);
      if (v.loudness !== null && !inWindow(v)) tooQuiet.add(v.clip);
    }
    let over = -Infinity;
    for (const v of vs) if (v.true_peak !== null) over = Math.max(over, v.true_peak - fsDb + match.get(v.clip));
    const lowered = Math.max(0, over - S.data.true_peak_aim_dbtp);  // the ceiling less the margin for what a 4x meter misses
    const out = new Map();
    for (const v of vs) {
      const change = match.get(v.clip) - lowered;
      out.set(v.clip, { db: 20 * Math.log10(v.unit_v) - fsDb + change, change });
    }
    return { gains: out, lowered, tooQuiet };
  }

  function levelText(v, lv) {
    const ref = entries()[S.reference];
    let diff = "";
    if (v.loudness === null) diff = "no loudness (silent, or under 0.4 s)";
    else if (v === ref) diff = "the reference";
    else if (ref.loudness !== null) {
      const d = v.loudness - ref.loudness;
      diff = Math.abs(d) < 0.05 ? "as loud as the reference" : Math.abs(d).toFixed(1) + " dB " + (d > 0 ? "louder" : "quieter") + " than the reference";
    }
    const g = lv.gains.get(v.clip);
    const played = !g ? "" : S.matched ? "played " + signed(g.change) : "true level" + (lv.lowered > 0.05 ? ", all " + signed(-lv.lowered) : "");
    const why = v.strings_cancel ? "its coils cancel the strings (only hum): not matched, plays at its true level" : "too quiet to match (over " + S.data.match_window_lu + " dB under the loudest): plays at its true level";
    if (g && S.matched && lv.tooQuiet.has(v.clip)) return [diff, played, why].filter(Boolean).join(" \u00b7 ");
    return [diff, played].filter(Boolean).join(" \u00b7 ");
  }

  // the loudness-matched band differences of d against the page's reference, as the run's table writes them
  // (python's "+.1f"): (band level + matching gain) - (the reference's), the gain being -loudness;
  // matched_level_db holds each band's level less the clip's loudness
  function matchedText(d) {
    const ref = entries()[S.reference];
    if (d === ref) return "reference";
    const p = d.matched_level_db || [], q = ref.matched_level_db || [];
    if (!p.length || p.length !== q.length) return "\u2014";
    const parts = p.map((v, k) => {
      if (v === null || q[k] === null) return "\u2014";
      const x = v - q[k];
      const r = Math.abs(x).toFixed(1);
      return (x < 0 ? "-" : "+") + r;
    });
    return parts.join(" / ") + (parts.every((t) => t === "\u2014") ? "" : " dB");
  }

  function refreshLevels() {
    const lv = levels();
    for (const [id, g] of lv.gains) S.player.setGain(id, g.db);
    for (const row of el("lineup").children) {
      const d = entries()[Number(row.dataset.index)];
      row.querySelector(".level").textContent = levelText(d, lv);
      const g = lv.gains.get(d.clip);
      if (g) row.dataset.gainDb = g.db.toFixed(3);
    }
    for (const tr of el("summary").querySelectorAll("tbody tr")) {
      const d = entries()[Number(tr.dataset.index)];
      const g = lv.gains.get(d.clip);
      tr.lastChild.textContent = g ? (S.matched && !lv.tooQuiet.has(d.clip) ? signed(g.change) : "true level") : "\u2014";
      tr.children[tr.children.length - 2].textContent = d.loudness === null || entries()[S.reference].loudness === null ? "\u2014" : signed(d.loudness - entries()[S.reference].loudness);
      if (S.data.matched_column !== null && S.data.matched_column !== undefined) {
        const cell = tr.children[2 + S.data.matched_column];
        cell.textContent = matchedText(d);
        cell.classList.add("matched");
      }
    }
    const th = el("summary").querySelectorAll("thead th")[2 + (S.data.matched_column === null || S.data.matched_column === undefined ? -99 : S.data.matched_column)];
    if (th) th.title = "against " + entries()[S.reference].name + ", the reference chosen on this page";
    body.dataset.reference = String(S.reference);
    el("heard-level").textContent = levelText(heardEntry(), lv);
    body.dataset.matched = String(S.matched);
    body.dataset.lowered = lv.lowered.toFixed(3);
  }

  // ---- decoding ---------------------------------------------------------------

  function bytesOfBase64(text) {
    const bin = atob(text);
    const out = new Uint8Array(bin.length);
    for (let i = 0; i < bin.length; i++) out[i] = bin.charCodeAt(i);
    return out.buffer;
  }

  async function clipBytes(v) {
    if (S.data.live) {
      const r = await fetch(v.clip, { cache: "no-store" });
      if (!r.ok) throw new Error(v.clip + " answered " + r.status);
      return r.arrayBuffer();
    }
    const store = window.renderPageClips || {};
    const text = store[v.clip];
    if (typeof text !== "string") throw new Error("its audio is missing: keep index-clips.js beside index.html");
    delete store[v.clip];
    return bytesOfBase64(text);
  }

  function decode(bytes) {
    return new Promise((resolve, reject) => S.ctx.decodeAudioData(bytes, resolve, (e) => reject(e || new Error("not a WAV the browser reads"))));
  }

  function fitTo(buf, n) {
    if (buf.length === n) return buf;
    const out = S.ctx.createBuffer(1, n, buf.sampleRate);
    out.copyToChannel(buf.getChannelData(0).subarray(0, Math.min(n, buf.length)), 0);
    return out;
  }

  async function decodeWanted() {
    const problems = [];
    for (const d of entries()) {
      for (const v of [d, d.before]) {
        if (!v || S.buffers.has(v.clip)) continue;
        try { S.buffers.set(v.clip, await decode(await clipBytes(v))); } catch (e) { problems.push([d, e.message || String(e)]); }
      }
    }
    return problems;
  }

  // the timeline's length: the latest clips' (they share one); older versions are cut or padded to it
  function syncDuration() {
    const first = entries().map((d) => S.buffers.get(d.clip)).find(Boolean);
    if (!first) return false;
    if (Math.abs(first.duration - S.duration) < 1e-9) return false;
    S.duration = first.duration;
    for (const [id, buf] of S.buffers) S.buffers.set(id, fitTo(buf, first.length));
    const wasPlaying = S.player.playing, at = S.player.position();
    S.player.clear();
    S.player.setDuration(S.duration);
    if (wasPlaying) S.player.playing = false;
    syncVoices();
    if (wasPlaying) S.player.start(Math.min(at, S.duration));
    return true;
  }

  function syncVoices() {
    const want = new Set();
    for (const d of entries()) { want.add(d.clip); if (d.before) want.add(d.before.clip); }
    for (const id of Array.from(S.player.voices.keys())) if (!want.has(id)) S.player.remove(id);
    for (const id of Array.from(S.buffers.keys())) if (!want.has(id)) S.buffers.delete(id);
    const lv = levels();
    let joined = null;
    for (const id of want) {
      if (S.buffers.has(id) && !S.player.voices.has(id)) {
        const t = S.player.add(id, S.buffers.get(id), lv.gains.get(id).db);
        if (t !== null) joined = t;
      }
    }
    if (S.buffers.has(heardId())) S.player.pick(heardId());
    return joined;
  }

  // ---- drawing ----------------------------------------------------------------

  function svg(tag, attrs, parent) {
    const n = document.createElementNS(SVG, tag);
    for (const k in attrs) n.setAttribute(k, attrs[k]);
    if (parent) parent.appendChild(n);
    return n;
  }

  // a curve's path; a null level (a response exactly zero) is a gap, a level under the axis is drawn on its floor
  function path(xs, ys, x, y, floor = -Infinity) {
    let d = "", pen = "M";
    for (let i = 0; i < xs.length; i++) {
      if (ys[i] === null) { pen = "M"; continue; }
      d += pen + x(xs[i]).toFixed(1) + " " + y(Math.max(ys[i], floor)).toFixed(1);
      pen = "L";
    }
    return d;
  }
  const RESPONSE_RANGE_DB = 100; // the overlay's axis reaches this far under its top, as the run's spectrum plots do

  function drawResponses() {
    const box = el("responses");
    box.replaceChildren();
    const curves = entries().filter((d) => d.response);
    if (!curves.length) { box.parentElement.hidden = true; return; }
    const W = 640, H = 300, L = 44, R = 10, T = 10, B = 26;
    let lo = Infinity, hi = -Infinity;
    for (const d of curves) for (const c of [d.response, d.passive]) if (c) for (const v of c[1]) if (v !== null) { lo = Math.min(lo, v); hi = Math.max(hi, v); }
    if (hi === -Infinity) { lo = -100; hi = 0; } // every curve exactly zero: an axis of its own, nothing drawn on it
    hi = Math.ceil(hi / 10) * 10;
    lo = Math.max(Math.floor(lo / 10) * 10, hi - RESPONSE_RANGE_DB);
    if (hi - lo < 20) hi = lo + 20;
    const x = (f) => L + ((Math.log10(f) - Math.log10(20)) / 3) * (W - L - R);
    const y = (v) => T + ((hi - v) / (hi - lo)) * (H - T - B);
    for (const f of [20, 50, 100, 200, 500, 1000, 2000, 5000, 10000, 20000]) {
      svg("line", { x1: x(f), x2: x(f), y1: T, y2: H - B, stroke: "#e4e1d8", "stroke-width": 1 }, box);
      svg("text", { x: x(f), y: H - 8, "text-anchor": "middle" }, box).textContent = f >= 1000 ? f / 1000 + "k" : String(f);
    }
    const step = hi - lo > 80 ? 20 : 10;
    for (let v = lo; v <= hi; v += step) {
      svg("line", { x1: L, x2: W - R, y1: y(v), y2: y(v), stroke: "#e4e1d8", "stroke-width": 1 }, box);
      svg("text", { x: L - 6, y: y(v) + 4, "text-anchor": "end" }, box).textContent = String(v);
    }
    const heard = heardEntry();
    for (const d of curves) {
      if (d === entries()[S.picked] || d.role === "compare") continue;
      svg("path", { d: path(d.response[0], d.response[1], x, y, lo), fill: "none", stroke: "#b8bcc6", "stroke-width": 1.2 }, box);
    }
    for (const d of curves) {  // the comparison pickup: always drawn, in its own colour and dash
      if (d.role !== "compare" || d === entries()[S.picked]) continue;
      svg("path", { d: path(d.response[0], d.response[1], x, y, lo), fill: "none", stroke: "#2f7a5a", "stroke-width": 1.8, "stroke-dasharray": "2 3", class: "compare-curve" }, box);
    }
    if (heard.passive) svg("path", { d: path(heard.passive[0], heard.passive[1], x, y, lo), fill: "none", stroke: "#a85a2f", "stroke-width": 1.6, "stroke-dasharray": "6 4" }, box);
    if (heard.response) svg("path", { d: path(heard.response[0], heard.response[1], x, y, lo), fill: "none", stroke: "#1f2433", "stroke-width": 2.6 }, box);
  }

  function spectrumRange() {
    let hi = -Infinity;
    for (const d of entries()) for (const v of d.spectrum[1]) hi = Math.max(hi, v);
    return [hi - 70, hi];
  }

  function drawSpectrum(box, d, range) {
    box.replaceChildren();
    const W = 160, H = 48, lo = range[0], hi = range[1];
    const x = (f) => ((Math.log10(f) - Math.log10(20)) / 3) * W;
    const y = (v) => 2 + ((hi - Math.max(lo, Math.min(hi, v))) / (hi - lo)) * (H - 4);
    const ref = entries()[S.reference];
    if (ref !== d) svg("path", { d: path(ref.spectrum[0], ref.spectrum[1], x, y), fill: "none", stroke: "#a85a2f", "stroke-width": 1, "stroke-dasharray": "3 2" }, box);
    svg("path", { d: path(d.spectrum[0], d.spectrum[1], x, y), fill: "none", stroke: "#3c4a66", "stroke-width": 1.4 }, box);
  }

  function drawWave() {
    const c = el("wave"), buf = S.buffers.get(heardId());
    const w = Math.max(1, Math.round(c.clientWidth * (window.devicePixelRatio || 1)));
    const h = Math.max(1, Math.round(c.clientHeight * (window.devicePixelRatio || 1)));
    c.width = w; c.height = h;
    const g = c.getContext("2d");
    g.clearRect(0, 0, w, h);
    if (!buf) return;
    const x = buf.getChannelData(0), n = x.length;
    let peak = 0;
    for (let i = 0; i < n; i += 7) peak = Math.max(peak, Math.abs(x[i]));
    const scale = peak > 0 ? (0.46 * h) / peak : 0;
    g.fillStyle = "#3c4a66";
    for (let px = 0; px < w; px++) {
      const a = Math.floor((px * n) / w), b = Math.max(a + 1, Math.floor(((px + 1) * n) / w));
      let mn = 0, mx = 0;
      for (let i = a; i < b; i++) { const s = x[i]; if (s < mn) mn = s; else if (s > mx) mx = s; }
      g.fillRect(px, h / 2 - mx * scale, 1, Math.max(1, (mx - mn) * scale));
    }
  }

  function placeSpan(area) {
    const r = area.querySelector(".region");
    const [a, b] = S.player ? S.player.span : [0, 0];
    const whole = !S.duration || (a <= 0 && b >= S.duration);
    r.hidden = whole;
    if (!whole) { r.style.left = (100 * a) / S.duration + "%"; r.style.width = (100 * (b - a)) / S.duration + "%"; }
  }

  function drawHeard() {
    const d = entries()[S.picked], h = heardEntry();
    el("heard-key").textContent = keyOf(S.picked);
    el("heard-name").textContent = d.name;
    const tag = el("heard-version");
    tag.hidden = !S.data.live || !d.version;
    tag.textContent = S.useBefore && d.before ? "version " + d.before.version + " (before)" : "version " + d.version + (d.before ? " (latest)" : "");
    el("heard-strip").src = h.strip;
    drawWave();
    placeSpan(el("timeline"));
    for (const row of el("lineup").children) {
      const mine = Number(row.dataset.index) === S.picked;
      row.classList.toggle("heard-row", mine);
      row.querySelector(".pick").setAttribute("aria-pressed", String(mine));
      placeSpan(row.querySelector(".lane"));
      const vb = row.querySelector(".versions");
      if (vb) for (const b of vb.querySelectorAll("button")) b.setAttribute("aria-pressed", String(mine && (b.dataset.which === "before") === S.useBefore));
    }
    for (const tr of el("summary").querySelectorAll("tbody tr")) tr.classList.toggle("heard-row", Number(tr.dataset.index) === S.picked);
    drawValues();
    drawResponses();
    body.dataset.picked = String(S.picked);
    body.dataset.heard = h.clip;
  }

  function drawValues() {
    const h = heardEntry(), ref = entries()[S.reference];
    el("values-of").textContent = entries()[S.picked].name + (S.useBefore && entries()[S.picked].before ? " (before)" : "");
    const refValues = new Map(ref.values);
    const only = el("only-differ").checked;
    const table = el("values");
    table.replaceChildren();
    const head = table.createTHead().insertRow();
    for (const t of ["value", entries()[S.picked].name, ref.name + " (reference)"]) { const th = document.createElement("th"); th.textContent = t; head.appendChild(th); }
    const tb = table.createTBody();
    let differ = 0;
    // every key either design has (the run gives both one key set; a key only one has is "absent" in the other)
    const heardValues = new Map(h.values);
    const keys = h.values.map((kv) => kv[0]).concat(ref.values.map((kv) => kv[0]).filter((k) => !heardValues.has(k)));
    const heardNumbers = new Map(h.numbers || []), refNumbers = new Map(ref.numbers || []);
    for (const k of keys) {
      const v = heardValues.has(k) ? heardValues.get(k) : "absent";
      const r = refValues.has(k) ? refValues.get(k) : "absent";
      const a = heardNumbers.get(k), b = refNumbers.get(k);
      // by the numbers where both are numbers (the figures shown are rounded to four), else as shown
      const diff = numeric(a) && numeric(b) ? !sameNumbers(a, b, S.data.values_rtol || 0) : r !== v;
      if (diff) differ++;
      if (only && !diff) continue;
      const tr = tb.insertRow();
      if (diff) tr.className = "differs";
      for (const t of [k, v, r]) tr.insertCell().textContent = t;
    }
    table.dataset.differ = String(differ);
  }

  // a value's number (page.design_numbers): a number, or a list or table of them; null where it is no number
  function numeric(x) {
    if (typeof x === "number") return true;
    if (Array.isArray(x)) return x.every(numeric);
    return x !== null && typeof x === "object" && Object.values(x).every(numeric);
  }

  // equal within rtol of the larger (VALUE_RTOL in page.py), element by element for lists and tables
  function sameNumbers(a, b, rtol) {
    if (typeof a === "number" && typeof b === "number") return a === b || Math.abs(a - b) <= rtol * Math.max(Math.abs(a), Math.abs(b));
    if (Array.isArray(a) || Array.isArray(b)) return Array.isArray(a) && Array.isArray(b) && a.length === b.length && a.every((x, i) => sameNumbers(x, b[i], rtol));
    if (typeof a !== "object" || typeof b !== "object") return false;
    const ka = Object.keys(a), kb = Object.keys(b);
    return ka.length === kb.length && ka.every((k) => k in b && sameNumbers(a[k], b[k], rtol));
  }

  function buildRows() {
    const lineup = el("lineup");
    lineup.replaceChildren();
    const range = spectrumRange();
    entries().forEach((d, i) => {
      const row = document.createElement("article");
      row.className = d.role === "compare" ? "row compare" : "row";
      row.dataset.index = String(i);
      row.dataset.state = S.buffers.has(d.clip) ? "ready" : "waiting";
      const pick = document.createElement("button");
      pick.type = "button"; pick.className = "pick";
      const key = document.createElement("span"); key.className = "key"; key.textContent = keyOf(i);
      const words = document.createElement("span");
      const name = document.createElement("span"); name.className = "name"; name.textContent = d.name;
      const level = document.createElement("span"); level.className = "level";
      words.append(name, level);
      if (d.role === "compare") { const tag = document.createElement("span"); tag.className = "role-tag"; tag.textContent = "passive comparison pickup: no preamp"; words.append(tag); }
      pick.append(key, words);
      pick.addEventListener("click", () => { pickDesign(i); pick.blur(); });
      const lane = document.createElement("div");
      lane.className = "lane";
      const img = document.createElement("img"); img.className = "strip"; img.alt = "spectrogram of " + d.name; img.src = d.strip;
      const region = document.createElement("div"); region.className = "region"; region.hidden = true;
      const head = document.createElement("div"); head.className = "head";
      lane.append(img, region, head);
      wireDrag(lane, i);
      const spec = svg("svg", { class: "spectrum", viewBox: "0 0 160 48", preserveAspectRatio: "none", role: "img", "aria-label": "spectrum of " + d.name });
      drawSpectrum(spec, d, range);
      row.append(pick, lane, spec);
      if (S.data.live) row.appendChild(versionsOf(d, i));
      const err = document.createElement("p"); err.className = "row-error"; err.textContent = d.error || d.decodeError || "";
      const warned = document.createElement("ul"); warned.className = "row-warnings";
      for (const w of d.warnings || []) { const li = document.createElement("li"); li.textContent = "warning: " + w; warned.appendChild(li); }
      row.dataset.warnings = String(warned.childElementCount);
      row.append(err, warned);
      lineup.appendChild(row);
    });
  }

  function versionsOf(d, i) {
    const box = document.createElement("div");
    box.className = "versions";
    for (const [which, label] of [["latest", "latest"], ["before", "before"]]) {
      const b = document.createElement("button");
      b.type = "button"; b.dataset.which = which; b.textContent = label;
      b.disabled = which === "before" && !d.before;
      b.addEventListener("click", () => { pickDesign(i, which === "before"); b.blur(); });
      box.appendChild(b);
    }
    const note = document.createElement("span");
    note.className = "changes";
    const parts = ["version " + d.version];
    if (d.rendered_s !== undefined && d.rendered_s !== null) parts.push("rendered in " + d.rendered_s.toFixed(2) + " s");
    if (d.changes && d.changes.length) parts.push("changed " + d.changes.map((c) => c[0] + " " + c[1] + " \u2192 " + c[2]).join(", "));
    note.textContent = parts.join(" \u00b7 ");
    box.appendChild(note);
    return box;
  }

  function buildSummary() {
    const table = el("summary");
    table.replaceChildren();
    const head = table.createTHead().insertRow();
    for (const t of ["key", "design"].concat(S.data.columns, ["loudness against the reference", "played"])) { const th = document.createElement("th"); th.textContent = t; head.appendChild(th); }
    const tb = table.createTBody();
    entries().forEach((d, i) => {
      const tr = tb.insertRow();
      tr.dataset.index = String(i);
      if (d.role === "compare") tr.className = "compare";
      for (const t of [keyOf(i), d.name].concat(d.cells, ["", ""])) tr.insertCell().textContent = t;
      tr.addEventListener("click", () => pickDesign(i));
    });
  }

  function buildReference() {
    const sel = el("reference");
    sel.replaceChildren();
    entries().forEach((d, i) => { const o = document.createElement("option"); o.value = String(i); o.textContent = d.name; sel.appendChild(o); });
    sel.value = String(S.reference);
  }

  function buildText() {
    const data = S.data;
    el("title").textContent = data.title;
    document.title = data.title;
    el("lede").textContent = data.lede;
    const notes = el("notes");
    notes.replaceChildren();
    for (const n of data.notes) { const li = document.createElement("li"); li.textContent = n; notes.appendChild(li); }
    const capped = entries().filter((d) => d.seconds < d.full_seconds);
    let text = "The page plays 16-bit copies of the clips (dithered); the WAV files beside it are the renders themselves, 32-bit float.";
    if (data.live) text = "The page plays 16-bit copies of the renders (dithered), kept in memory by render watch; no clip is written to disk.";
    if (capped.length) text += " Clips longer than " + data.page_seconds + " s are cut to their first " + data.page_seconds + " s here (" + capped.map((d) => d.name).join(", ") + "); their loudness is still the whole clip's.";
    el("copies").textContent = text;
    body.dataset.capped = String(capped.length);
  }

  function buildProblems() {
    const list = el("problems");
    list.replaceChildren();
    const lines = S.data.problems || [];
    for (const p of lines) { const li = document.createElement("li"); li.textContent = p; list.appendChild(li); }
    list.hidden = lines.length === 0;
    body.dataset.problems = String(lines.length);
  }

  function rebuild() {
    buildText();
    buildProblems();
    buildRows();
    buildSummary();
    buildReference();
    refreshLevels();
    drawHeard();
  }

  // ---- the transport ------------------------------------------------------------

  function drawClock() {
    const p = S.player ? S.player.position() : 0;
    el("clock").textContent = p.toFixed(2) + " / " + S.duration.toFixed(2) + " s";
    const left = S.duration ? (100 * p) / S.duration + "%" : "0";
    for (const h of document.querySelectorAll(".head")) h.style.left = left;
  }

  function tick() { drawClock(); if (S.player && S.player.playing) requestAnimationFrame(tick); }

  function drawTransport() {
    const playing = !!(S.player && S.player.playing);
    el("play").innerHTML = playing ? "&#10074;&#10074;" : "&#9654;";
    el("play").setAttribute("aria-label", playing ? "stop" : "play");
    body.dataset.playing = String(playing);
    const [a, b] = S.player ? S.player.span : [0, 0];
    el("span-text").textContent = a <= 0 && b >= S.duration ? "Repeating the whole clip." : "Repeating " + a.toFixed(2) + "\u2013" + b.toFixed(2) + " s.";
    body.dataset.span = a.toFixed(4) + "-" + b.toFixed(4);
    placeSpan(el("timeline"));
    for (const row of el("lineup").children) placeSpan(row.querySelector(".lane"));
    drawClock();
    if (playing) requestAnimationFrame(tick);
  }

  function togglePlay() {
    if (!S.player || body.dataset.phase !== "ready") return;
    if (S.player.playing) S.player.stop(); else S.player.start(S.player.o0);
    drawTransport();
  }

  function pickDesign(i, before) {
    if (i < 0 || i >= entries().length) return;
    S.picked = i;
    S.useBefore = !!before && !!entries()[i].before;
    if (S.buffers.has(heardId())) S.player.pick(heardId());
    refreshLevels();
    drawHeard();
  }

  function flipBefore() {
    const d = entries()[S.picked];
    if (!d.before) return;
    pickDesign(S.picked, !S.useBefore);
  }

  function timeAt(area, clientX) {
    const box = area.getBoundingClientRect();
    return Math.max(0, Math.min(1, (clientX - box.left) / box.width)) * S.duration;
  }

  function wireDrag(area, index) {
    area.addEventListener("pointerdown", (ev) => {
      if (!S.duration) return;
      S.drag = { area, x0: ev.clientX, t0: timeAt(area, ev.clientX), moved: false };
      area.setPointerCapture(ev.pointerId);
      ev.preventDefault();
    });
    area.addEventListener("pointermove", (ev) => {
      const g = S.drag;
      if (!g || g.area !== area) return;
      if (Math.abs(ev.clientX - g.x0) > 4) g.moved = true;
      if (!g.moved) return;
      const t1 = timeAt(area, ev.clientX), r = area.querySelector(".region");
      const a = Math.min(g.t0, t1), b = Math.max(g.t0, t1);
      r.hidden = false; r.style.left = (100 * a) / S.duration + "%"; r.style.width = (100 * (b - a)) / S.duration + "%";
    });
    const end = (ev) => {
      const g = S.drag;
      if (!g || g.area !== area) return;
      S.drag = null;
      if (ev.type === "pointercancel") { drawTransport(); return; }
      const t1 = timeAt(area, ev.clientX);
      if (g.moved && Math.abs(t1 - g.t0) >= 0.05) {
        S.player.setSpan(Math.min(g.t0, t1), Math.max(g.t0, t1));
      } else {
        const [a, b] = S.player.span;
        if (g.t0 < a || g.t0 >= b) S.player.setSpan(0, S.duration);
        if (index !== null && index !== S.picked) pickDesign(index);
        S.player.seek(g.t0);
      }
      drawTransport();
    };
    area.addEventListener("pointerup", end);
    area.addEventListener("pointercancel", end);
  }

  function setVolume() {
    S.volumeDb = Number(el("volume").value);
    el("volume-db").textContent = (S.volumeDb < 0 ? "\u2212" : "") + Math.abs(S.volumeDb) + " dB";
    if (S.player) S.player.setVolume(S.volumeDb);
    body.dataset.volume = String(S.volumeDb);
  }

  // The controls and what is heard agree at all times. At the start the page sets its controls (20 dB down, loudness
  // matched) over anything a browser restored into them; whenever it is shown again (Back and Forward: the page from
  // the back/forward cache, or a form filled in again) it takes its state from the controls as they stand. The
  // controls also say autocomplete="off", so that browsers do not restore them at all.
  function resetControls() {
    el("volume").value = String(START_VOLUME_DB);
    el("matched").checked = true;
    el("only-differ").checked = false;
  }

  function readControls() {
    S.matched = el("matched").checked;
    setVolume();
    body.dataset.matched = String(S.matched);
    if (body.dataset.phase !== "caution" && body.dataset.phase !== "ready") return; // still starting: it builds from S
    const r = el("reference").value === "" ? NaN : Number(el("reference").value);
    if (Number.isInteger(r) && r >= 0 && r < entries().length) S.reference = r; else el("reference").value = String(S.reference);
    buildRows(); refreshLevels(); drawHeard();
  }

  // space is the play key, but a focused control that acts on space itself (a button, a switch, a list) keeps it
  function keepsSpace(t) {
    const tag = t.tagName;
    if (tag === "BUTTON" || tag === "SELECT" || tag === "SUMMARY" || (tag === "A" && t.hasAttribute("href"))) return true;
    return tag === "INPUT" && t.type !== "range";
  }

  function wire() {
    el("begin").addEventListener("click", begin);
    el("play").addEventListener("click", () => { togglePlay(); el("play").blur(); });
    el("matched").addEventListener("change", () => { S.matched = el("matched").checked; refreshLevels(); });
    el("volume").addEventListener("input", setVolume);
    el("whole").addEventListener("click", () => { if (S.player) { S.player.setSpan(0, S.duration); drawTransport(); } });
    el("reference").addEventListener("change", () => { S.reference = Number(el("reference").value); buildRows(); refreshLevels(); drawHeard(); });
    el("only-differ").addEventListener("change", drawValues);
    wireDrag(el("timeline"), null);
    // each key does one thing: the page's action (once: a key held down and repeating does nothing more), its
    // default prevented; or, on a focused control that keeps it, the control's own
    let handled = false;
    document.addEventListener("keydown", (ev) => {
      handled = false;
      const t = ev.target || {};
      if (t.tagName === "SELECT" || t.tagName === "TEXTAREA" || t.isContentEditable || (t.tagName === "INPUT" && t.type !== "checkbox" && t.type !== "range")) return;
      if (ev.ctrlKey || ev.metaKey || ev.altKey || body.dataset.phase !== "ready") return;
      let action = null;
      if (/^[0-9]$/.test(ev.key)) {
        const i = ev.key === "0" ? 9 : Number(ev.key) - 1;
        if (i < entries().length && entries()[i].role !== "compare") action = () => pickDesign(i);
      } else if (ev.key.toLowerCase() === COMPARE_KEY && compareIndex() >= 0) action = () => pickDesign(compareIndex());
      else if (ev.key === NEXT_KEY || ev.key === PREVIOUS_KEY) action = () => stepDesign(ev.key === NEXT_KEY ? 1 : -1);
      else if (ev.key === " " && !keepsSpace(t)) action = togglePlay;
      else if ((ev.key === "b" || ev.key === "B") && S.data.live) action = flipBefore;
      if (!action) return;
      handled = true;
      ev.preventDefault();
      if (!ev.repeat) action();
    });
    document.addEventListener("keyup", (ev) => { if (handled && ev.key === " ") ev.preventDefault(); });
    window.addEventListener("pageshow", readControls);
    window.addEventListener("resize", () => { if (S.data && S.buffers.size) drawWave(); });
  }

  function begin() {
    el("begin").disabled = true;
    el("caution").hidden = true;
    if (S.ctx && S.ctx.resume) S.ctx.resume().catch(() => {});
    el("play").disabled = false;
    phase("ready");
  }

  // ---- render watch: new versions as they are saved -------------------------------

  async function applyState(st) {
    const oldClips = new Map(entries().map((d, i) => [i, d.clip]));
    const keep = S.data;
    S.data = st;
    const problems = await decodeWanted();
    for (const [d, message] of problems) d.decodeError = "could not decode: " + message;
    if (!entries().length) { S.data = keep; return; }
    if (S.picked >= entries().length) S.picked = 0;
    if (S.reference >= entries().length) S.reference = 0;
    const pickedChanged = oldClips.get(S.picked) !== entries()[S.picked].clip;
    if (pickedChanged) S.useBefore = false;
    if (!syncDuration()) {
      const joined = syncVoices();
      if (joined !== null && pickedChanged) {
        S.swaps += 1;
        body.dataset.swaps = String(S.swaps);
        body.dataset.swapAt = String(Math.round(Date.now() + (joined - S.player.ctx.currentTime) * 1000));
      }
    }
    body.dataset.version = String(st.version);
    rebuild();
    drawTransport();
  }

  async function follow() {
    let wait = 400;
    for (;;) {
      try {
        const r = await fetch("/api/changes?after=" + S.data.version, { cache: "no-store" });
        if (r.status === 200) await applyState(await r.json());
        else if (r.status !== 204) throw new Error("answered " + r.status);
        if (body.dataset.link === "down") el("lede").textContent = S.data.lede;
        body.dataset.link = "up";
        wait = 400;
      } catch (e) {
        body.dataset.link = "down";
        el("lede").textContent = "render watch is not answering (stopped?); trying again\u2026";
        await sleep(wait);
        wait = Math.min(5000, wait * 2);
      }
    }
  }

  // ---- for checks: the page's own playback, rendered offline ---------------------------

  // plan: {seconds, actions: [{at, key} | {at, click: selector} | {at, volume: dB} | {at, rejoin: index} | {at, span: [a, b]}]};
  // key, click and volume go through the page's own controls, rejoin and span through what a new version and a drag
  // do, while an OfflineAudioContext stands in for the speakers.
  async function renderOffline(plan) {
    const live = S.player;
    if (live.playing) { live.stop(); drawTransport(); }
    const sr = S.ctx.sampleRate;
    const octx = new OfflineAudioContext(1, Math.round(plan.seconds * sr), sr);
    const p = new Player(octx, S.volumeDb);
    p.setDuration(live.duration);
    p.span = live.span.slice();
    p.o0 = live.o0;
    p.active = live.active;
    for (const v of live.voices.values()) p.add(v.id, v.buffer, v.db);
    S.player = p;
    const act = (a) => {
      if (a.key !== undefined) document.dispatchEvent(new KeyboardEvent("keydown", { key: a.key, bubbles: true }));
      if (a.click !== undefined) document.querySelector(a.click).click();
      if (a.volume !== undefined) { el("volume").value = String(a.volume); el("volume").dispatchEvent(new Event("input")); }
      if (a.rejoin !== undefined) {
        // what a new version does (render watch): design a.rejoin's clip joins as a new voice at the playhead, and is heard
        const d = entries()[a.rejoin], id = d.clip + "#again";
        S.player.add(id, S.buffers.get(d.clip), levels().gains.get(d.clip).db);
        S.player.pick(id);
      }
      if (a.span !== undefined) { S.player.setSpan(a.span[0], a.span[1]); drawTransport(); } // what a drag across a picture does, to the sample
    };
    try {
      for (const a of plan.actions) octx.suspend(a.at).then(() => { act(a); octx.resume(); });
      const out = (await octx.startRendering()).getChannelData(0);
      const u8 = new Uint8Array(out.buffer, out.byteOffset, out.byteLength);
      let s = "";
      for (let i = 0; i < u8.length; i += 0x8000) s += String.fromCharCode.apply(null, u8.subarray(i, i + 0x8000));
      return { sampleRate: sr, samples: btoa(s) };
    } finally {
      S.player = live;
      live.span = p.span.slice();
      live.o0 = p.playing ? p.position() : p.o0;
      if (live.voices.has(p.active)) live.pick(p.active);
      live.setVolume(S.volumeDb);
      refreshLevels();
      drawHeard();
      drawTransport();
    }
  }
  window.renderComparePage = { renderOffline };

  // ---- start ---------------------------------------------------------------------

  function makeContext(rate) {
    const C = window.AudioContext || window.webkitAudioContext;
    try { return new C({ sampleRate: rate, latencyHint: "interactive" }); } catch (e) { return new C(); }
  }

  async function boot() {
    let data;
    try { data = JSON.parse(el("page-data").textContent); } catch (e) { fail("The page's data could not be read (" + e.message + ")."); return; }
    wire();
    resetControls();
    readControls();
    if (data.live) {
      try {
        const r = await fetch("/api/state", { cache: "no-store" });
        if (!r.ok) throw new Error("answered " + r.status);
        data = await r.json();
      } catch (e) { fail("Could not reach render watch (" + e.message + "). Is it still running?"); return; }
    }
    S.data = data;
    if (!entries().length) { fail("This page has no clips."); return; }
    if (Number.isInteger(data.reference) && data.reference < entries().length) S.reference = data.reference; // the run's --reference
    S.ctx = makeContext(data.sample_rate);
    S.player = new Player(S.ctx, S.volumeDb);
    const problems = await decodeWanted();
    for (const [d, message] of problems) d.decodeError = "could not decode: " + message;
    syncDuration();
    syncVoices();
    rebuild();
    drawTransport();
    body.dataset.decoded = String(entries().filter((d) => S.buffers.has(d.clip)).length);
    body.dataset.version = String(data.version === undefined ? 0 : data.version);
    el("before-key").hidden = !data.live;
    el("compare-key").hidden = compareIndex() < 0;
    if (!S.buffers.size) { fail("No clip could be decoded: " + problems.map((p) => p[0].name + ": " + p[1]).join("; ")); return; }
    el("caution").hidden = false;
    el("begin").disabled = false;
    phase("caution");
    if (data.live) follow();
  }

  boot();
})();
