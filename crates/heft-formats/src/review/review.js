// heft's review page: plays a run in 3D with its curves, the audit's findings and the summary
// values. Written by heft (crates/heft-formats/src/review_out.rs embeds this file in every
// page); it needs nothing but the page itself, so the page opens from a file:// address.
//
// World space is heft's: right-handed, Z up, metres. Positions arrive as whole multiples of
// `page.step` from `page.origin`, frame after frame as differences (zigzag, LEB128), deflated
// and in base64 chunks; they are kept as 32-bit floats relative to the origin.
"use strict";
(() => {
  const page = JSON.parse(document.getElementById("heft-review").textContent);
  const PALETTE = ["#1f5ea8", "#d66026", "#2e8c46", "#963c96", "#78781e", "#2896a0"];
  const INK = "#1e2226";
  const FAINT = "#8a9097";
  const GRID = "#dcdfe2";
  const GRID_MAJOR = "#b9bec4";
  const CONTACT = "rgba(120, 170, 230, 0.18)";
  const WARNING = "rgba(230, 150, 20, 0.25)";
  const ERROR = "rgba(210, 40, 40, 0.22)";
  const N = page.frames;
  const state = { frame: 0, playing: false, clock: 0, last: 0 };

  const el = (tag, attrs, ...children) => {
    const e = document.createElement(tag);
    for (const [k, v] of Object.entries(attrs || {})) {
      if (k === "class") e.className = v;
      else if (k.startsWith("on")) e.addEventListener(k.slice(2), v);
      else e.setAttribute(k, v);
    }
    for (const c of children) e.append(c);
    return e;
  };
  const fmt = (v, digits = 4) => {
    if (!Number.isFinite(v)) return String(v);
    if (v === 0) return "0";
    const a = Math.abs(v);
    if (a >= 1e5 || a < 1e-3) return v.toExponential(digits - 1);
    return String(Number(v.toPrecision(digits)));
  };
  const timeOf = (i) => page.first_time + i / page.fps;
  const frameNumber = (i) => page.first_frame + i;

  // ---- data -------------------------------------------------------------------------------

  /** The bytes of track `k`: its base64 chunks decoded and inflated. */
  async function trackBytes(k) {
    const chunks = document.querySelectorAll(`script[type="application/x-heft-data"][data-track="${k}"]`);
    const stream = new DecompressionStream("deflate");
    const writer = stream.writable.getWriter();
    const writing = (async () => {
      for (const c of chunks) {
        const text = atob(c.textContent);
        const bytes = new Uint8Array(text.length);
        for (let i = 0; i < text.length; i++) bytes[i] = text.charCodeAt(i);
        await writer.write(bytes);
      }
      await writer.close();
    })();
    const inflated = new Uint8Array(await new Response(stream.readable).arrayBuffer());
    await writing;
    return inflated;
  }

  /** Track `k` of `width` values per frame: Float32Array(N * width), each value from its column's
   * reference (positions from the origin; a collider's radii from 0). */
  async function decodeTrack(k, width) {
    const bytes = await trackBytes(k);
    const out = new Float32Array(N * width);
    const previous = new Float64Array(width);
    let at = 0;
    for (let i = 0; i < N * width; i++) {
      let z = 0;
      let scale = 1;
      for (;;) {
        if (at >= bytes.length) throw new Error(`track ${k}: the data ends at value ${i} of ${N * width}`);
        const b = bytes[at++];
        z += (b & 127) * scale;
        if (b < 128) break;
        scale *= 128;
      }
      const d = z % 2 === 0 ? z / 2 : -(z + 1) / 2;
      const c = i % width;
      previous[c] += d;
      out[i] = previous[c] * page.step;
    }
    if (at !== bytes.length) throw new Error(`track ${k}: ${bytes.length - at} bytes left over`);
    return out;
  }

  // ---- layout -----------------------------------------------------------------------------

  const frameLabel = el("span", { class: "frame" });
  const scrub = el("input", { type: "range", id: "scrub", min: "0", max: String(Math.max(N - 1, 0)), value: "0", step: "1", "aria-label": "frame" });
  const playButton = el("button", { id: "play", title: "play or pause (space)" }, "Play");
  const button = (text, title, action) => el("button", { title, onclick: action }, text);
  const tubes = el("input", { type: "checkbox", id: "tubes" });
  tubes.checked = page.strands === "tubes";
  const paths = el("input", { type: "checkbox", id: "paths" });
  paths.checked = true;
  const canvas = el("canvas", { id: "view", tabindex: "0", "aria-label": "3D view of the run" });
  const status = el("p", { class: "status" }, "reading the run's data...");
  const findingsList = el("ol", { class: "findings" });
  const chartsBox = el("div", { class: "charts" });
  const legendBox = el("div");

  const sub = `${page.graph} \u00b7 frames ${page.first_frame}..${page.first_frame + N - 1} at ${fmt(page.fps)} fps \u00b7 heft ${page.heft_version}`;
  document.body.append(
    el("header", {}, el("h1", {}, page.title), el("p", { class: "sub" }, sub)),
    el(
      "main",
      {},
      el(
        "section",
        { class: "viewpane" },
        canvas,
        el(
          "div",
          { class: "controls" },
          button("|<", "first frame (Home)", () => setFrame(0)),
          button("<", "frame back (left arrow)", () => step(-1)),
          playButton,
          button(">", "frame forward (right arrow)", () => step(1)),
          button(">|", "last frame (End)", () => setFrame(N - 1)),
          scrub,
          frameLabel,
        ),
        legendBox,
        el(
          "div",
          { class: "options" },
          el("label", {}, tubes, " strands as tubes"),
          el("label", {}, paths, " paths of points"),
          button("reset view", "the first view again", () => resetCamera()),
          el("span", { class: "hint" }, "drag: turn \u00b7 shift-drag or right-drag: move \u00b7 wheel: zoom"),
        ),
        status,
      ),
      el("aside", {}, el("h2", {}, "Findings"), findingsList, el("h2", {}, "Summary values"), summaryTable()),
    ),
    el("section", { class: "curves" }, el("h2", {}, "Curves"), chartsBox),
  );

  function summaryTable() {
    if (page.summaries.length === 0) return el("p", { class: "note" }, "The run reports no summary values.");
    const body = el("tbody");
    for (const s of page.summaries) {
      body.append(el("tr", {}, el("td", {}, `${s.node}.${s.name}`), el("td", { class: "num" }, fmt(s.value)), el("td", {}, s.unit ? s.unit : "-")));
    }
    return el("table", { class: "summary" }, el("thead", {}, el("tr", {}, el("th", {}, "node.summary"), el("th", {}, "value"), el("th", {}, "unit"))), body);
  }

  // ---- the 3D view ------------------------------------------------------------------------

  const scene = page.scene.map((item) => ({ ...item, data: null }));
  const lo = page.bounds[0].map((v, k) => v - page.origin[k]);
  const hi = page.bounds[1].map((v, k) => v - page.origin[k]);
  const centre = [0, 1, 2].map((k) => (lo[k] + hi[k]) / 2);
  const size = Math.max(hi[0] - lo[0], hi[1] - lo[1], hi[2] - lo[2], 0.2);
  const groundZ = -page.origin[2];
  // The ground grid's half width about the scene's centre.
  const gridHalf = (Math.max(hi[0] - lo[0], hi[1] - lo[1], 0.5) * 1.3) / 2;
  const camera = {};
  function resetCamera() {
    // Looking at the middle of the grid and the scene above (or below) it, from far enough
    // that their bounding sphere fills the view's height.
    const zLow = Math.min(lo[2], groundZ);
    const zHigh = Math.max(hi[2], groundZ);
    camera.target = [centre[0], centre[1], (zLow + zHigh) / 2];
    camera.azimuth = (-60 * Math.PI) / 180;
    camera.elevation = (15 * Math.PI) / 180;
    const radius = Math.max(Math.hypot(2 * gridHalf, 2 * gridHalf, zHigh - zLow) / 2, 0.1);
    camera.distance = (radius / Math.sin(FOV / 2)) * 1.12;
    draw();
  }
  const FOV = (40 * Math.PI) / 180;

  /** The camera's basis: position, right, up and forward (unit vectors), relative to the origin. */
  function basis() {
    const ce = Math.cos(camera.elevation);
    const dir = [ce * Math.cos(camera.azimuth), ce * Math.sin(camera.azimuth), Math.sin(camera.elevation)];
    const eye = camera.target.map((t, k) => t + dir[k] * camera.distance);
    const f = dir.map((v) => -v);
    // right = f x z, normalised; up = right x f.
    let r = [f[1], -f[0], 0];
    const rl = Math.hypot(r[0], r[1]) || 1;
    r = r.map((v) => v / rl);
    const u = [r[1] * f[2] - r[2] * f[1], r[2] * f[0] - r[0] * f[2], r[0] * f[1] - r[1] * f[0]];
    return { eye, r, u, f };
  }

  let view = null; // per draw: the basis, focal length and screen centre
  const NEAR = 1e-3;
  /** Projects (x, y, z) relative to the origin into `out` [sx, sy, depth]; false behind the eye. */
  function project(x, y, z, out) {
    const dx = x - view.eye[0];
    const dy = y - view.eye[1];
    const dz = z - view.eye[2];
    const depth = dx * view.f[0] + dy * view.f[1] + dz * view.f[2];
    if (depth < NEAR) return false;
    out[0] = view.cx + (view.focal * (dx * view.r[0] + dy * view.r[1] + dz * view.r[2])) / depth;
    out[1] = view.cy - (view.focal * (dx * view.u[0] + dy * view.u[1] + dz * view.u[2])) / depth;
    out[2] = depth;
    return true;
  }

  /** A round step for an axis spanning `span` with about `count` ticks. */
  function niceStep(span, count) {
    const raw = span / Math.max(count, 1);
    const p = Math.pow(10, Math.floor(Math.log10(raw)));
    for (const m of [1, 2, 2.5, 5, 10]) if (m * p >= raw) return m * p;
    return 10 * p;
  }
  /** The decimals that write every multiple of `stepSize` exactly (0.25: 2, 0.2: 1, 5: 0). */
  const decimals = (stepSize) => {
    for (let d = 0; d < 12; d++) {
      const scaled = stepSize * Math.pow(10, d);
      if (Math.abs(scaled - Math.round(scaled)) < 1e-6 * Math.max(1, scaled)) return d;
    }
    return 12;
  };

  const ctx = canvas.getContext("2d");
  let cssWidth = 0;
  let cssHeight = 0;
  function sizeCanvas(c, width, height) {
    const ratio = window.devicePixelRatio || 1;
    c.width = Math.round(width * ratio);
    c.height = Math.round(height * ratio);
    c.style.width = `${width}px`;
    c.style.height = `${height}px`;
    const g = c.getContext("2d");
    g.setTransform(ratio, 0, 0, ratio, 0, 0);
    return g;
  }
  function layoutView() {
    const box = canvas.parentElement.getBoundingClientRect();
    cssWidth = Math.max(320, Math.floor(box.width));
    cssHeight = Math.max(280, Math.min(Math.floor(cssWidth * 0.62), Math.floor(window.innerHeight * 0.7)));
    sizeCanvas(canvas, cssWidth, cssHeight);
  }

  const P = [0, 0, 0];
  const Q = [0, 0, 0];
  function line3(a, b) {
    if (project(a[0], a[1], a[2], P) && project(b[0], b[1], b[2], Q)) {
      ctx.moveTo(P[0], P[1]);
      ctx.lineTo(Q[0], Q[1]);
    }
  }
  function text3(p, text, align, baseline, dx = 0, dy = 0) {
    if (!project(p[0], p[1], p[2], P)) return;
    ctx.textAlign = align;
    ctx.textBaseline = baseline;
    ctx.fillText(text, P[0] + dx, P[1] + dy);
  }

  /** The ground grid at z = 0 under the scene, its x and y labelled in metres, and a z ruler. */
  function drawGround() {
    const span = 2 * gridHalf;
    const s = niceStep(span, 8);
    const x0 = Math.floor((centre[0] - span / 2 + page.origin[0]) / s) * s - page.origin[0];
    const x1 = Math.ceil((centre[0] + span / 2 + page.origin[0]) / s) * s - page.origin[0];
    const y0 = Math.floor((centre[1] - span / 2 + page.origin[1]) / s) * s - page.origin[1];
    const y1 = Math.ceil((centre[1] + span / 2 + page.origin[1]) / s) * s - page.origin[1];
    const nx = Math.round((x1 - x0) / s);
    const ny = Math.round((y1 - y0) / s);
    ctx.lineWidth = 1;
    for (const major of [false, true]) {
      ctx.strokeStyle = major ? GRID_MAJOR : GRID;
      ctx.beginPath();
      for (let i = 0; i <= nx; i++) {
        const wx = x0 + i * s + page.origin[0];
        if (Math.abs(wx) < s / 2 === major) line3([x0 + i * s, y0, groundZ], [x0 + i * s, y1, groundZ]);
      }
      for (let j = 0; j <= ny; j++) {
        const wy = y0 + j * s + page.origin[1];
        if (Math.abs(wy) < s / 2 === major) line3([x0, y0 + j * s, groundZ], [x1, y0 + j * s, groundZ]);
      }
      ctx.stroke();
    }
    ctx.fillStyle = FAINT;
    ctx.font = "11px sans-serif";
    const dec = decimals(s);
    // Labels along the grid's edges nearest the eye.
    const yEdge = view.eye[1] < (y0 + y1) / 2 ? y0 : y1;
    const xEdge = view.eye[0] < (x0 + x1) / 2 ? x0 : x1;
    // A world coordinate on the grid, rounded to the grid (no "-0.0").
    const label = (v) => (Math.round(v / s) * s + 0).toFixed(dec).replace(/^-(0\.?0*)$/, "$1");
    for (let i = 0; i <= nx; i += Math.max(1, Math.ceil(nx / 8))) {
      text3([x0 + i * s, yEdge, groundZ], label(x0 + i * s + page.origin[0]), "center", "top", 0, 4);
    }
    for (let j = 0; j <= ny; j += Math.max(1, Math.ceil(ny / 8))) {
      text3([xEdge, y0 + j * s, groundZ], label(y0 + j * s + page.origin[1]), "center", "top", 0, 4);
    }
    ctx.fillStyle = INK;
    ctx.font = "12px sans-serif";
    text3([(x0 + x1) / 2, yEdge, groundZ], "x [m]", "center", "top", 0, 20);
    text3([xEdge, (y0 + y1) / 2, groundZ], "y [m]", "center", "top", 0, 20);
    // The z ruler at the grid's corner drawn furthest left.
    const top = Math.max(hi[2], groundZ + s);
    const zs = niceStep(top - groundZ, 6);
    let corner = null;
    for (const x of [x0, x1]) {
      for (const y of [y0, y1]) {
        if (project(x, y, groundZ, P) && (corner === null || P[0] < corner[3])) corner = [x, y, groundZ, P[0]];
      }
    }
    if (corner === null) return;
    const [rx, ry] = corner;
    ctx.strokeStyle = FAINT;
    ctx.beginPath();
    line3([rx, ry, groundZ], [rx, ry, top]);
    const zc = Math.floor((top - groundZ) / zs + 1e-9);
    for (let k = 0; k <= zc; k++) {
      if (project(rx, ry, groundZ + k * zs, P)) {
        ctx.moveTo(P[0] - 4, P[1]);
        ctx.lineTo(P[0], P[1]);
      }
    }
    ctx.stroke();
    ctx.fillStyle = FAINT;
    ctx.font = "11px sans-serif";
    const zd = decimals(zs);
    for (let k = 1; k <= zc; k++) text3([rx, ry, groundZ + k * zs], (k * zs).toFixed(zd), "right", "middle", -7, 0);
    ctx.fillStyle = INK;
    ctx.font = "12px sans-serif";
    text3([rx, ry, top], "z [m]", "center", "bottom", 0, -6);
  }

  /** A small trihedron in the corner: which way x, y and z point. */
  function drawAxesKey() {
    const ox = 46;
    const oy = cssHeight - 40;
    const len = 26;
    ctx.lineWidth = 1.5;
    ctx.font = "12px sans-serif";
    ctx.textAlign = "center";
    ctx.textBaseline = "middle";
    for (const [k, name] of [[0, "x"], [1, "y"], [2, "z"]]) {
      const a = [0, 0, 0];
      a[k] = 1;
      const sx = a[0] * view.r[0] + a[1] * view.r[1] + a[2] * view.r[2];
      const sy = a[0] * view.u[0] + a[1] * view.u[1] + a[2] * view.u[2];
      ctx.strokeStyle = INK;
      ctx.beginPath();
      ctx.moveTo(ox, oy);
      ctx.lineTo(ox + sx * len, oy - sy * len);
      ctx.stroke();
      ctx.fillStyle = INK;
      ctx.fillText(name, ox + sx * (len + 9), oy - sy * (len + 9));
    }
  }

  /** The outline of a tapered capsule between projected balls (a, ra) and (b, rb), filled. */
  function capsulePath(ax, ay, ra, bx, by, rb) {
    const dx = bx - ax;
    const dy = by - ay;
    const d = Math.hypot(dx, dy);
    ctx.beginPath();
    if (d <= Math.abs(ra - rb) + 1e-9) {
      const [x, y, r] = ra >= rb ? [ax, ay, ra] : [bx, by, rb];
      ctx.arc(x, y, r, 0, 2 * Math.PI);
      return;
    }
    const base = Math.atan2(dy, dx);
    const phi = Math.acos((ra - rb) / d);
    ctx.arc(ax, ay, ra, base + phi, base - phi + 2 * Math.PI);
    ctx.arc(bx, by, rb, base - phi, base + phi);
    ctx.closePath();
  }

  function drawColliders(item, f) {
    const d = item.data;
    const base = f * item.points * 3;
    const A = [0, 0, 0];
    const B = [0, 0, 0];
    ctx.fillStyle = "rgba(118, 136, 156, 0.22)";
    ctx.strokeStyle = "rgba(70, 84, 100, 0.55)";
    ctx.lineWidth = 1;
    for (let c = 0; c < item.points / 3; c++) {
      const o = base + c * 9;
      if (!project(d[o], d[o + 1], d[o + 2], A) || !project(d[o + 3], d[o + 4], d[o + 5], B)) continue;
      capsulePath(A[0], A[1], (view.focal * d[o + 6]) / A[2], B[0], B[1], (view.focal * d[o + 7]) / B[2]);
      ctx.fill();
      ctx.stroke();
    }
  }

  function drawJoints(item, f, colour) {
    const d = item.data;
    const base = f * item.points * 3;
    const screen = new Float64Array(item.points * 3);
    const ok = new Uint8Array(item.points);
    for (let j = 0; j < item.points; j++) {
      const o = base + 3 * j;
      if (project(d[o], d[o + 1], d[o + 2], P)) {
        screen.set(P, 3 * j);
        ok[j] = 1;
      }
    }
    ctx.strokeStyle = colour;
    ctx.lineWidth = 2;
    ctx.beginPath();
    for (const [a, b] of item.bones || []) {
      if (ok[a] && ok[b]) {
        ctx.moveTo(screen[3 * a], screen[3 * a + 1]);
        ctx.lineTo(screen[3 * b], screen[3 * b + 1]);
      }
    }
    ctx.stroke();
    ctx.fillStyle = colour;
    ctx.beginPath();
    for (let j = 0; j < item.points; j++) {
      if (!ok[j]) continue;
      ctx.moveTo(screen[3 * j] + 3, screen[3 * j + 1]);
      ctx.arc(screen[3 * j], screen[3 * j + 1], 3, 0, 2 * Math.PI);
    }
    ctx.fill();
  }

  function drawStrands(item, f, colour) {
    const d = item.data;
    const base = f * item.points * 3;
    const chain = item.chain;
    const count = item.points / chain;
    if (!tubes.checked) {
      ctx.strokeStyle = colour;
      ctx.lineWidth = 1.25;
      ctx.lineJoin = "round";
      ctx.beginPath();
      for (let s = 0; s < count; s++) {
        let pen = false;
        for (let j = 0; j < chain; j++) {
          const o = base + 3 * (s * chain + j);
          if (!project(d[o], d[o + 1], d[o + 2], P)) {
            pen = false;
            continue;
          }
          if (pen) ctx.lineTo(P[0], P[1]);
          else ctx.moveTo(P[0], P[1]);
          pen = true;
        }
      }
      ctx.stroke();
      return;
    }
    // Tubes: each strand at its own width (the radius at its middle's depth), far ones first.
    const order = [];
    for (let s = 0; s < count; s++) {
      const o = base + 3 * (s * chain + (chain >> 1));
      if (project(d[o], d[o + 1], d[o + 2], P)) order.push([P[2], s]);
    }
    order.sort((a, b) => b[0] - a[0]);
    // A tube's edge: its colour darkened, so that dense hair keeps its colour.
    const rgb = [1, 3, 5].map((i) => Math.round(parseInt(colour.slice(i, i + 2), 16) * 0.6));
    const edge = `rgb(${rgb.join(", ")})`;
    ctx.lineCap = "round";
    ctx.lineJoin = "round";
    for (const [depth, s] of order) {
      const w = Math.max(1, (2 * page.strand_radius * view.focal) / depth);
      ctx.beginPath();
      let pen = false;
      for (let j = 0; j < chain; j++) {
        const o = base + 3 * (s * chain + j);
        if (!project(d[o], d[o + 1], d[o + 2], P)) {
          pen = false;
          continue;
        }
        if (pen) ctx.lineTo(P[0], P[1]);
        else ctx.moveTo(P[0], P[1]);
        pen = true;
      }
      ctx.strokeStyle = edge;
      ctx.lineWidth = w + 1;
      ctx.stroke();
      ctx.strokeStyle = colour;
      ctx.lineWidth = w;
      ctx.stroke();
    }
    ctx.lineCap = "butt";
  }

  function drawPoints(item, f, colour) {
    const d = item.data;
    const base = f * item.points * 3;
    ctx.fillStyle = colour;
    ctx.beginPath();
    for (let j = 0; j < item.points; j++) {
      const o = base + 3 * j;
      if (project(d[o], d[o + 1], d[o + 2], P)) ctx.rect(P[0] - 1.5, P[1] - 1.5, 3, 3);
    }
    ctx.fill();
  }

  function drawPoint(item, f, colour) {
    const d = item.data;
    if (paths.checked) {
      ctx.strokeStyle = colour;
      ctx.globalAlpha = 0.35;
      ctx.lineWidth = 1;
      ctx.beginPath();
      let pen = false;
      for (let i = 0; i < N; i++) {
        if (!project(d[3 * i], d[3 * i + 1], d[3 * i + 2], P)) {
          pen = false;
          continue;
        }
        if (pen) ctx.lineTo(P[0], P[1]);
        else ctx.moveTo(P[0], P[1]);
        pen = true;
      }
      ctx.stroke();
      ctx.globalAlpha = 1;
    }
    if (project(d[3 * f], d[3 * f + 1], d[3 * f + 2], P)) {
      ctx.fillStyle = colour;
      ctx.strokeStyle = INK;
      ctx.lineWidth = 1;
      ctx.beginPath();
      ctx.arc(P[0], P[1], 4.5, 0, 2 * Math.PI);
      ctx.fill();
      ctx.stroke();
      ctx.fillStyle = INK;
      ctx.font = "11px sans-serif";
      ctx.textAlign = "left";
      ctx.textBaseline = "bottom";
      ctx.fillText(item.name, P[0] + 6, P[1] - 4);
    }
  }

  let ready = false;
  function draw() {
    if (!cssWidth) return;
    const f = state.frame;
    ctx.fillStyle = "#ffffff";
    ctx.fillRect(0, 0, cssWidth, cssHeight);
    const b = basis();
    view = { ...b, focal: cssHeight / 2 / Math.tan(FOV / 2), cx: cssWidth / 2, cy: cssHeight / 2 };
    drawGround();
    if (ready) {
      let colour = 0;
      for (const item of scene) {
        if (item.kind === "colliders") drawColliders(item, f);
      }
      for (const item of scene) {
        if (item.kind === "joints") drawJoints(item, f, "#4a5058");
      }
      for (const item of scene) {
        const c = PALETTE[colour % PALETTE.length];
        if (item.kind === "strands") drawStrands(item, f, c);
        else if (item.kind === "points") drawPoints(item, f, c);
        else if (item.kind === "point") drawPoint(item, f, c);
        else continue;
        colour++;
      }
    }
    drawAxesKey();
    ctx.fillStyle = INK;
    ctx.font = "13px sans-serif";
    ctx.textAlign = "right";
    ctx.textBaseline = "top";
    ctx.fillText(`frame ${frameNumber(f)}  \u00b7  ${timeOf(f).toFixed(3)} s`, cssWidth - 10, 8);
  }

  /** What the view shows, each series with its colour. */
  function viewLegend() {
    const list = el("ul", { class: "legend" });
    let colour = 0;
    for (const item of scene) {
      let c;
      let what;
      if (item.kind === "colliders") {
        c = "rgba(118, 136, 156, 0.6)";
        what = `${item.points / 3} colliders`;
      } else if (item.kind === "joints") {
        c = "#4a5058";
        what = `${item.points} joints`;
      } else {
        c = PALETTE[colour++ % PALETTE.length];
        what =
          item.kind === "strands"
            ? `${item.points / item.chain} strand${item.points / item.chain === 1 ? "" : "s"} of ${item.chain} joints`
            : item.kind === "points"
              ? `${item.points} points`
              : "point";
      }
      const swatch = el("span", { class: "swatch" });
      swatch.style.background = c;
      list.append(el("li", {}, swatch, `${item.name} (${what})`));
    }
    return list;
  }

  // Turning, moving and zooming the view.
  let drag = null;
  canvas.addEventListener("contextmenu", (e) => e.preventDefault());
  canvas.addEventListener("pointerdown", (e) => {
    drag = { x: e.clientX, y: e.clientY, move: e.shiftKey || e.button === 2 };
    canvas.setPointerCapture(e.pointerId);
  });
  canvas.addEventListener("pointerup", () => {
    drag = null;
  });
  canvas.addEventListener("pointermove", (e) => {
    if (!drag) return;
    const dx = e.clientX - drag.x;
    const dy = e.clientY - drag.y;
    drag.x = e.clientX;
    drag.y = e.clientY;
    if (drag.move) {
      const b = basis();
      const per = (camera.distance * Math.tan(FOV / 2) * 2) / cssHeight;
      for (let k = 0; k < 3; k++) camera.target[k] += (-dx * b.r[k] + dy * b.u[k]) * per;
    } else {
      camera.azimuth -= dx * 0.008;
      camera.elevation = Math.max(-1.5, Math.min(1.5, camera.elevation + dy * 0.008));
    }
    draw();
  });
  canvas.addEventListener(
    "wheel",
    (e) => {
      e.preventDefault();
      camera.distance = Math.max(size * 0.05, Math.min(size * 50, camera.distance * Math.exp(e.deltaY * 0.001)));
      draw();
    },
    { passive: false },
  );

  // ---- charts -----------------------------------------------------------------------------

  const MARGIN = { left: 78, right: 78, top: 28, bottom: 44 };
  const charts = [];
  const t0 = timeOf(0);
  const t1 = Math.max(timeOf(N - 1), t0 + 1e-9);

  function range(values, extra = []) {
    let a = Infinity;
    let b = -Infinity;
    for (const list of values) for (const v of list) if (Number.isFinite(v)) { a = Math.min(a, v); b = Math.max(b, v); }
    for (const v of extra) { a = Math.min(a, v); b = Math.max(b, v); }
    if (!Number.isFinite(a)) return [0, 1];
    const pad = Math.max((b - a) * 0.05, 1e-6);
    return [a - pad, b + pad];
  }

  /** Ticks and labels of an axis from `a` to `b`. */
  function ticks(a, b, count) {
    const s = niceStep(b - a, count);
    const out = [];
    for (let v = Math.ceil(a / s) * s; v <= b + s * 1e-9; v += s) out.push(Math.abs(v) < s * 1e-9 ? 0 : v);
    return { values: out, digits: decimals(s) };
  }

  /** A chart: a static picture drawn once, then the cursor at the frame on top. */
  function makeChart(spec, extraHeight = 0) {
    const box = el("figure", { class: "chart" });
    const c = el("canvas", { "aria-label": spec.title });
    box.append(el("figcaption", {}, spec.title), c);
    if (spec.paths_total) box.append(el("p", { class: "note" }, `The first ${spec.series.length} of ${spec.paths_total} paths are drawn.`));
    chartsBox.append(box);
    const chart = { spec, canvas: c, box, height: 250 + extraHeight, picture: null, x: null, y: null };
    c.addEventListener("click", (e) => {
      const rect = c.getBoundingClientRect();
      const px = e.clientX - rect.left;
      if (spec.style === "path") return;
      const hit = chart.hit ? chart.hit(px, e.clientY - rect.top) : null;
      if (hit !== null && hit !== undefined) setFrame(hit);
      else setFrame(Math.round(((chart.x.invert(px) - t0) * page.fps)));
    });
    charts.push(chart);
    return chart;
  }

  function scale(d0, d1, r0, r1) {
    const f = (v) => r0 + ((v - d0) / (d1 - d0 || 1)) * (r1 - r0);
    f.invert = (p) => d0 + ((p - r0) / (r1 - r0 || 1)) * (d1 - d0);
    return f;
  }

  function axes(g, chart, w, h, xr, yr, xLabel, yLabel, yTicks = null) {
    const x = scale(xr[0], xr[1], MARGIN.left, w - MARGIN.right);
    const y = scale(yr[0], yr[1], h - MARGIN.bottom, MARGIN.top);
    chart.x = x;
    chart.y = y;
    g.fillStyle = "#ffffff";
    g.fillRect(0, 0, w, h);
    g.strokeStyle = GRID;
    g.lineWidth = 1;
    g.font = "11px sans-serif";
    g.fillStyle = FAINT;
    const tx = ticks(xr[0], xr[1], Math.max(4, Math.floor(w / 90)));
    const ty = yTicks || ticks(yr[0], yr[1], 5);
    g.beginPath();
    for (const v of tx.values) { g.moveTo(Math.round(x(v)) + 0.5, MARGIN.top); g.lineTo(Math.round(x(v)) + 0.5, h - MARGIN.bottom); }
    for (const v of ty.values) { g.moveTo(MARGIN.left, Math.round(y(v)) + 0.5); g.lineTo(w - MARGIN.right, Math.round(y(v)) + 0.5); }
    g.stroke();
    g.textAlign = "center";
    g.textBaseline = "top";
    for (const v of tx.values) g.fillText(v.toFixed(tx.digits), x(v), h - MARGIN.bottom + 5);
    g.textAlign = "right";
    g.textBaseline = "middle";
    for (const v of ty.values) g.fillText(v.toFixed(ty.digits), MARGIN.left - 6, y(v));
    g.strokeStyle = INK;
    g.strokeRect(MARGIN.left + 0.5, MARGIN.top + 0.5, w - MARGIN.left - MARGIN.right, h - MARGIN.top - MARGIN.bottom);
    g.fillStyle = INK;
    g.font = "12px sans-serif";
    g.textAlign = "center";
    g.textBaseline = "bottom";
    g.fillText(xLabel, (MARGIN.left + w - MARGIN.right) / 2, h - 4);
    g.save();
    g.translate(14, (MARGIN.top + h - MARGIN.bottom) / 2);
    g.rotate(-Math.PI / 2);
    g.textBaseline = "top";
    g.fillText(yLabel, 0, 0);
    g.restore();
  }

  function polyline(g, xs, ys, x, y) {
    g.beginPath();
    for (let i = 0; i < xs.length; i++) {
      if (i === 0) g.moveTo(x(xs[i]), y(ys[i]));
      else g.lineTo(x(xs[i]), y(ys[i]));
    }
    g.stroke();
  }

  function legend(g, w, entries) {
    g.font = "11px sans-serif";
    const width = Math.max(...entries.map(([name]) => g.measureText(name).width)) + 34;
    const left = w - MARGIN.right - width - 8;
    g.fillStyle = "rgba(255, 255, 255, 0.88)";
    g.fillRect(left, MARGIN.top + 6, width, entries.length * 15 + 6);
    g.strokeStyle = INK;
    g.lineWidth = 1;
    g.strokeRect(left + 0.5, MARGIN.top + 6.5, width, entries.length * 15 + 6);
    entries.forEach(([name, style], k) => {
      const yy = MARGIN.top + 16 + k * 15;
      g.strokeStyle = style;
      g.lineWidth = 2;
      g.beginPath();
      g.moveTo(left + 6, yy);
      g.lineTo(left + 24, yy);
      g.stroke();
      g.fillStyle = INK;
      g.textAlign = "left";
      g.textBaseline = "middle";
      g.fillText(name, left + 28, yy);
    });
  }

  /** Shaded runs of frames where `on(i)`: each as [first, last] frame indices. */
  function runs(on) {
    const out = [];
    let start = -1;
    for (let i = 0; i <= N; i++) {
      const v = i < N && on(i);
      if (v && start < 0) start = i;
      if (!v && start >= 0) { out.push([start, i - 1]); start = -1; }
    }
    return out;
  }

  const times = Array.from({ length: N }, (_, i) => timeOf(i));

  function paintChart(chart) {
    const spec = chart.spec;
    const w = Math.max(360, chart.box.clientWidth - 16);
    const h = chart.height;
    chart.width = w;
    const g = sizeCanvas(chart.canvas, w, h);
    if (spec.style === "path") {
      const xr = range(spec.series.map((s) => s.values));
      const yr = range(spec.series.map((s) => s.y));
      axes(g, chart, w, h, xr, yr, spec.x_label, spec.y_label);
      spec.series.forEach((s, k) => {
        g.strokeStyle = PALETTE[k % PALETTE.length];
        g.lineWidth = 1.5;
        polyline(g, s.values, s.y, chart.x, chart.y);
      });
      if (spec.series.length <= PALETTE.length) legend(g, w, spec.series.map((s, k) => [s.name, PALETTE[k % PALETTE.length]]));
    } else if (spec.style === "body_weights") {
      const bw = spec.body_weight || 1;
      const force = spec.series[0].values;
      const yr = range([force], [0, bw * 1.2]);
      yr[0] = 0;
      axes(g, chart, w, h, [t0, t1], yr, spec.x_label, spec.y_label);
      // The second axis: body weights.
      const right = ticks(yr[0] / bw, yr[1] / bw, 5);
      g.fillStyle = FAINT;
      g.font = "11px sans-serif";
      g.textAlign = "left";
      g.textBaseline = "middle";
      for (const v of right.values) g.fillText(v.toFixed(right.digits), w - MARGIN.right + 6, chart.y(v * bw));
      g.save();
      g.fillStyle = INK;
      g.font = "12px sans-serif";
      g.translate(w - 14, (MARGIN.top + h - MARGIN.bottom) / 2);
      g.rotate(Math.PI / 2);
      g.textAlign = "center";
      g.textBaseline = "top";
      g.fillText("body weights [BW]", 0, 0);
      g.restore();
      if (spec.contact) shadeContact(g, chart, spec.contact, h);
      g.strokeStyle = "rgba(0, 0, 0, 0.6)";
      g.lineWidth = 1;
      polyline(g, [t0, t1], [bw, bw], chart.x, chart.y);
      g.strokeStyle = PALETTE[0];
      g.lineWidth = 2;
      polyline(g, times, force, chart.x, chart.y);
      legend(g, w, [[`body weight ${bw.toFixed(0)} N`, "rgba(0, 0, 0, 0.6)"], [spec.series[0].name, PALETTE[0]]]);
    } else if (spec.style === "audit") {
      const yr = range([spec.series[0].values], [0, 1]);
      yr[0] = Math.min(0, yr[0]);
      axes(g, chart, w, h, [t0, t1], yr, spec.x_label, spec.y_label);
      shadeContact(g, chart, spec.contact, h);
      chart.spans = [];
      page.audit.findings.forEach((finding, k) => {
        const a = finding.first_frame - page.first_frame;
        const b = finding.last_frame - page.first_frame;
        const xa = chart.x(timeOf(Math.max(a, 0)));
        const xb = Math.max(chart.x(timeOf(Math.min(b, N - 1))), xa + 3);
        g.fillStyle = finding.severity === "error" ? ERROR : WARNING;
        g.fillRect(xa, MARGIN.top, xb - xa, h - MARGIN.top - MARGIN.bottom);
        g.fillStyle = finding.severity === "error" ? "#b02020" : "#a86400";
        g.font = "11px sans-serif";
        g.textAlign = "left";
        g.textBaseline = "top";
        g.fillText(`${k + 1} ${finding.words}`, xa + 2, MARGIN.top + 4 + 13 * (k % 6));
        chart.spans.push([xa, xb, Math.max(a, 0)]);
      });
      g.strokeStyle = "rgba(0, 0, 0, 0.6)";
      g.lineWidth = 1;
      polyline(g, [t0, t1], [1, 1], chart.x, chart.y);
      g.strokeStyle = PALETTE[0];
      g.lineWidth = 2;
      polyline(g, times, spec.series[0].values, chart.x, chart.y);
      chart.hit = (px) => {
        const span = chart.spans.find(([a, b]) => px >= a && px <= b);
        return span ? span[2] : null;
      };
    } else if (spec.style === "flag") {
      axes(g, chart, w, h, [t0, t1], [-0.1, 1.1], spec.x_label, spec.y_label, { values: [0, 1], digits: 0 });
      const v = spec.series[0].values;
      shadeContact(g, chart, v.map((x) => (x >= 0.5 ? 1 : 0)), h);
      g.strokeStyle = PALETTE[0];
      g.lineWidth = 2;
      g.beginPath();
      for (let i = 0; i < N; i++) {
        const y = chart.y(v[i] >= 0.5 ? 1 : 0);
        if (i === 0) g.moveTo(chart.x(times[i]), y);
        else {
          g.lineTo(chart.x(times[i]), chart.y(v[i - 1] >= 0.5 ? 1 : 0));
          g.lineTo(chart.x(times[i]), y);
        }
      }
      g.stroke();
    } else {
      const yr = range(spec.series.map((s) => s.values));
      axes(g, chart, w, h, [t0, t1], yr, spec.x_label, spec.y_label);
      spec.series.forEach((s, k) => {
        g.strokeStyle = PALETTE[k % PALETTE.length];
        g.lineWidth = 2;
        polyline(g, times, s.values, chart.x, chart.y);
      });
      legend(g, w, spec.series.map((s, k) => [s.name, PALETTE[k % PALETTE.length]]));
    }
    chart.picture = g.getImageData(0, 0, chart.canvas.width, chart.canvas.height);
  }

  function shadeContact(g, chart, flags, h) {
    g.fillStyle = CONTACT;
    for (const [a, b] of runs((i) => flags[i] === 1)) {
      const xa = chart.x(times[a]);
      const xb = Math.max(chart.x(times[b]), xa + 1);
      g.fillRect(xa, MARGIN.top, xb - xa, h - MARGIN.top - MARGIN.bottom);
    }
  }

  function cursor(chart) {
    if (!chart.picture) return;
    const g = chart.canvas.getContext("2d");
    g.putImageData(chart.picture, 0, 0);
    const f = state.frame;
    const spec = chart.spec;
    g.strokeStyle = INK;
    g.fillStyle = INK;
    g.lineWidth = 1;
    if (spec.style === "path") {
      spec.series.forEach((s, k) => {
        g.fillStyle = PALETTE[k % PALETTE.length];
        g.beginPath();
        g.arc(chart.x(s.values[f]), chart.y(s.y[f]), 4, 0, 2 * Math.PI);
        g.fill();
        g.stroke();
      });
      return;
    }
    const x = Math.round(chart.x(times[f])) + 0.5;
    g.beginPath();
    g.moveTo(x, MARGIN.top);
    g.lineTo(x, chart.height - MARGIN.bottom);
    g.stroke();
    const shown = spec.style === "audit" ? [spec.series[0]] : spec.series;
    g.font = "11px sans-serif";
    g.textAlign = x > chart.width / 2 ? "right" : "left";
    g.textBaseline = "bottom";
    shown.forEach((s, k) => {
      const v = s.values[f];
      g.fillStyle = PALETTE[k % PALETTE.length];
      g.beginPath();
      g.arc(x, chart.y(v), 3.5, 0, 2 * Math.PI);
      g.fill();
    });
    g.fillStyle = INK;
    const values = shown.map((s) => fmt(s.values[f])).join(", ");
    g.fillText(`${times[f].toFixed(3)} s: ${values}`, x + (g.textAlign === "left" ? 5 : -5), MARGIN.top - 4);
  }

  // The audit's chart and list first, then the review's curves and the graph's plots.
  if (page.audit.findings !== undefined && page.audit.body) {
    makeChart(
      {
        title: `Findings of the audit of ${page.audit.body}: the ground force its centre of mass implies`,
        style: "audit",
        x_label: "time [s]",
        y_label: "m (g + a_z) [body weights]",
        series: [{ name: "implied ground force", values: page.audit.weight }],
        contact: page.audit.contact,
      },
      40,
    );
  }
  for (const spec of page.charts) makeChart(spec);
  if (page.charts.length === 0 && !page.audit.body) chartsBox.append(el("p", { class: "note" }, "This review lists no curves."));

  function fillFindings() {
    if (page.audit.note) {
      findingsList.replaceWith(el("p", { class: "note" }, `No audit: ${page.audit.note}.`));
      return;
    }
    if (page.audit.findings.length === 0) {
      findingsList.replaceWith(el("p", { class: "note" }, `The audit of ${page.audit.body} found nothing where the motion breaks physics.`));
      return;
    }
    page.audit.findings.forEach((f, k) => {
      const item = el(
        "li",
        { class: `finding ${f.severity}`, tabindex: "0", title: "show its first frame" },
        el("span", { class: "badge" }, `${k + 1} ${f.severity}`),
        el("strong", {}, ` ${f.words} `),
        el("span", { class: "frames" }, `frames ${f.first_frame}..${f.last_frame}`),
        el("p", {}, `${fmt(f.measured)} ${f.unit} where physics gives ${fmt(f.expected)} ${f.unit}: ${f.explanation}.`),
        el("p", { class: "change" }, `Change: ${f.change}.`),
      );
      const go = () => setFrame(f.first_frame - page.first_frame);
      item.addEventListener("click", go);
      item.addEventListener("keydown", (e) => { if (e.key === "Enter") go(); });
      item.dataset.first = f.first_frame - page.first_frame;
      item.dataset.last = f.last_frame - page.first_frame;
      findingsList.append(item);
    });
  }
  fillFindings();

  // ---- playing ----------------------------------------------------------------------------

  function setFrame(i) {
    const f = Math.max(0, Math.min(N - 1, Math.round(Number(i)) || 0));
    state.frame = f;
    scrub.value = String(f);
    frameLabel.textContent = `frame ${frameNumber(f)} (${timeOf(f).toFixed(3)} s)`;
    for (const li of findingsList.children) li.classList.toggle("now", f >= Number(li.dataset.first) && f <= Number(li.dataset.last));
    draw();
    for (const c of charts) cursor(c);
  }
  function step(d) {
    pause();
    setFrame((state.frame + d + N) % N);
  }
  function pause() {
    state.playing = false;
    playButton.textContent = "Play";
  }
  function play() {
    state.playing = true;
    playButton.textContent = "Pause";
    state.last = performance.now();
    state.clock = state.frame;
    requestAnimationFrame(tick);
  }
  function tick(now) {
    if (!state.playing) return;
    state.clock += ((now - state.last) / 1000) * page.fps;
    state.last = now;
    const f = Math.floor(state.clock) % N;
    if (f !== state.frame) setFrame(f);
    requestAnimationFrame(tick);
  }
  playButton.addEventListener("click", () => (state.playing ? pause() : play()));
  scrub.addEventListener("input", () => {
    pause();
    setFrame(scrub.value);
  });
  document.addEventListener("keydown", (e) => {
    // Keys go to the page and the view; a focused control (the slider, a button, a finding)
    // handles its own.
    if (e.target !== document.body && e.target !== canvas) return;
    if (e.key === " ") { e.preventDefault(); state.playing ? pause() : play(); }
    else if (e.key === "ArrowRight") { e.preventDefault(); step(1); }
    else if (e.key === "ArrowLeft") { e.preventDefault(); step(-1); }
    else if (e.key === "Home") setFrame(0);
    else if (e.key === "End") setFrame(N - 1);
  });
  tubes.addEventListener("change", draw);
  paths.addEventListener("change", draw);

  function layout() {
    layoutView();
    for (const c of charts) paintChart(c);
    setFrame(state.frame);
  }
  window.addEventListener("resize", layout);

  // ---- start, and the hook tests read the page through ------------------------------------

  legendBox.append(viewLegend());
  const started = (async () => {
    for (const item of scene) item.data = await decodeTrack(item.track, item.points * 3);
    ready = true;
    status.textContent = "";
    status.hidden = true;
  })();
  resetCamera();
  layout();
  const readyPromise = started.then(
    () => setFrame(0),
    (e) => {
      status.textContent = `This page could not read its data: ${e.message}`;
      status.classList.add("failed");
      console.error(`heft review: ${e.message}`);
      throw e;
    },
  );

  const itemNamed = (name) => {
    const item = scene.find((s) => s.name === name);
    if (!item) throw new Error(`no series named ${name} on this page`);
    return item;
  };
  window.heftReview = {
    ready: readyPromise,
    frames: N,
    get frame() { return state.frame; },
    get frameNumber() { return frameNumber(state.frame); },
    setFrame,
    /** Every joint drawn: the points of strands, point sets, points and bodies. */
    jointCount: () => scene.filter((s) => s.kind !== "colliders").reduce((n, s) => n + s.points, 0),
    scene: () => scene.map((s) => ({ name: s.name, kind: s.kind, points: s.points, chain: s.chain || null })),
    /** Point `index` of series `name` at the shown frame, world metres. */
    point(name, index) {
      const item = itemNamed(name);
      if (!(index >= 0 && index < item.points)) throw new Error(`${name} has ${item.points} points, not ${index}`);
      const o = (state.frame * item.points + index) * 3;
      return [0, 1, 2].map((k) => page.origin[k] + item.data[o + k]);
    },
    findings: () => page.audit.findings.map((f) => ({ kind: f.kind, first: f.first_frame, last: f.last_frame })),
    charts: () => charts.map((c) => c.spec.title),
    /** Milliseconds per draw of the 3D view at the shown frame, over `count` draws, each drawn
     * to the pixels (one pixel read back forces the canvas to finish it). */
    drawTime(count = 20) {
      const start = performance.now();
      for (let i = 0; i < count; i++) {
        draw();
        ctx.getImageData(0, 0, 1, 1);
      }
      return (performance.now() - start) / count;
    },
  };
})();
