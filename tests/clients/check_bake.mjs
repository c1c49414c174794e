// Checks heft's glTF 2.0 bakes with real clients: the Khronos glTF validator and three.js.
//
//   node check_bake.mjs DIR...
//
// Every DIR is the output folder of a `heft run`. For every output of DIR/run.json whose kind
// is "glTF 2.0" and whose file ends in .glb or .gltf:
//
//  a. the Khronos glTF validator (npm `gltf-validator`) reports 0 errors and 0 warnings
//     (infos and hints are allowed and printed);
//  b. three.js's GLTFLoader loads it, and `scene.getObjectByName(name)` finds, for every node
//     of the document, that very node's object (three.js strips characters such as `.` from
//     names, and renames duplicates);
//  c. played with three.js's AnimationMixer at every baked frame, every object that carries
//     `extras.heft` (three.js: `userData.heft`) sits where the run's CSV output of its series
//     says, within 1e-5 m, after heft's Z-up data is turned Y up, (x, y, z) -> (x, z, -y)
//     (README, "Motion out"; the glTF 2.0 specification, section 3.4, makes +Y up);
//  d. every skin holds a ribbon skinned by three.js itself: pairs of vertices 2 cm apart at each
//     joint (across its X axis) and midway between consecutive joints (weighted 0.5 / 0.5).
//     What fails the check is twist: between every joint and its child, the turn about the
//     bone that the child's X axis has beyond the parent's, carried along the bone by the
//     shortest arc, against the same in the bind pose (from three.js's own world matrices). A
//     flat card skinned across the pair narrows to cos(twist / 2) of its width from twist alone;
//     that must stay at least 90 % (a twist under 51.7 degrees). The pairs' plain skinned
//     widths are printed too: linear blend skinning also narrows a card where the chain bends
//     far from its bind pose, which is the skinning method's, not the joint frames'.
//
// The motion contract of heft's bakes (c and d):
//   asset.extras.heft = {"frame_rate": "24/1", "first_frame": F, "frame_count": N,
//                        "axes": "z_up" | "y_up"}
//   baked frame i is at animation time i / frame_rate and is frame number F + i (when
//   "time_accessor" is given, at the i-th value of that accessor: a bake written into a
//   character's own file keys its frames at the clip's own times); when "clip" is given, only
//   that animation holds heft's channels and is played (the character's other clips are its own);
//   a node showing a series heft computed has
//   extras.heft = {"name": "braid.positions.s0.j3", "series": "braid.positions", "point": 3}
//   ("point": the index k of the CSV columns `<node>.<port>.p<k>.x [m]`; absent for a vec3 or a
//   transform series). A CSV output of run.json has "node" and "port" (its series is
//   node + "." + port) and "file"; its header is `frame,time [s],<columns>` and its first
//   column is the frame number.
//
// Exit status 0 only if every check of every file passed; one line per file with the figures,
// then what failed.

import { readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

import validator from 'gltf-validator';
import * as THREE from 'three';
import { GLTFLoader } from 'three/addons/loaders/GLTFLoader.js';

// What Node lacks for three.js's loaders. Node 20 has fetch, Request, Response, Headers and
// ReadableStream, but not ProgressEvent, which three's FileLoader makes for every chunk it
// reads; a plain Event with the three fields it sets is all FileLoader needs.
if (typeof globalThis.ProgressEvent === 'undefined') {
  globalThis.ProgressEvent = class ProgressEvent extends Event {
    constructor(type, init = {}) {
      super(type);
      this.lengthComputable = Boolean(init.lengthComputable);
      this.loaded = init.loaded ?? 0;
      this.total = init.total ?? 0;
    }
  };
}

const POSITION_TOLERANCE = 1e-5; // m, the task's tolerance (float32 keys, composed chains)
const RIBBON_WIDTH = 0.02; // m
const RIBBON_MIN_RATIO = 0.9;
const MAX_LISTED = 12; // failures listed per kind and file; the rest are counted

// ---------------------------------------------------------------------------------------------
// Small helpers

/** Collects failures of one kind, listing the first few and counting the rest. */
class Failures {
  constructor() {
    this.lines = [];
    this.counts = new Map();
  }

  add(kind, message) {
    const n = (this.counts.get(kind) ?? 0) + 1;
    this.counts.set(kind, n);
    if (n <= MAX_LISTED) this.lines.push(`${kind}: ${message}`);
  }

  get any() {
    return this.counts.size > 0;
  }

  report() {
    const out = [...this.lines];
    for (const [kind, n] of this.counts) {
      if (n > MAX_LISTED) out.push(`${kind}: ... and ${n - MAX_LISTED} more`);
    }
    return out;
  }
}

const fmt = (v) => (Number.isFinite(v) ? v.toExponential(2) : String(v));

/** A whole ArrayBuffer holding exactly these bytes. */
function arrayBufferOf(bytes) {
  return bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength);
}

/** Splits one CSV line as heft writes it (numbers and plain names; quotes only if needed). */
function splitCsvLine(line) {
  const cells = [];
  let cell = '';
  let quoted = false;
  for (let i = 0; i < line.length; i++) {
    const c = line[i];
    if (quoted) {
      if (c === '"' && line[i + 1] === '"') {
        cell += '"';
        i++;
      } else if (c === '"') {
        quoted = false;
      } else {
        cell += c;
      }
    } else if (c === '"') {
      quoted = true;
    } else if (c === ',') {
      cells.push(cell);
      cell = '';
    } else {
      cell += c;
    }
  }
  cells.push(cell);
  return cells;
}

/** A CSV output of heft: its header and its rows keyed by frame number. */
function readCsv(file) {
  const lines = readFileSync(file, 'utf8').split(/\r?\n/).filter((l) => l.length > 0);
  if (lines.length === 0) throw new Error(`${file}: empty`);
  const header = splitCsvLine(lines[0]);
  if (header[0] !== 'frame') throw new Error(`${file}: the first column is \`${header[0]}\`, not \`frame\``);
  const rows = new Map();
  for (let l = 1; l < lines.length; l++) {
    const cells = splitCsvLine(lines[l]).map(Number);
    if (cells.some((v) => !Number.isFinite(v))) {
      throw new Error(`${file}:${l + 1}: a cell is not a number`);
    }
    rows.set(cells[0], cells);
  }
  return { header, rows, column: new Map(header.map((h, i) => [h, i])) };
}

/** The frame rate "num/den" as [num, den], or null. */
function parseRate(text) {
  const m = typeof text === 'string' ? /^\s*(\d+)\s*\/\s*(\d+)\s*$/.exec(text) : null;
  if (!m) return null;
  const [num, den] = [Number(m[1]), Number(m[2])];
  return num > 0 && den > 0 ? [num, den] : null;
}

// ---------------------------------------------------------------------------------------------
// a. The Khronos validator

async function validate(file, bytes, failures) {
  const dir = path.dirname(file);
  const report = await validator.validateBytes(new Uint8Array(bytes), {
    uri: path.basename(file),
    maxIssues: 0, // all of them
    writeTimestamp: false,
    externalResourceFunction: (uri) =>
      new Promise((resolve, reject) => {
        try {
          resolve(new Uint8Array(readFileSync(path.resolve(dir, decodeURIComponent(uri)))));
        } catch (e) {
          reject(String(e));
        }
      }),
  });
  const issues = report.issues;
  for (const m of issues.messages) {
    if (m.severity === 0 || m.severity === 1) {
      const what = m.severity === 0 ? 'validator error' : 'validator warning';
      failures.add(what, `${m.code} at ${m.pointer ?? '(document)'}: ${m.message}`);
    }
  }
  if (issues.numErrors > 0 || issues.numWarnings > 0) {
    // Counted even if the messages above were cut by the validator.
    if (!failures.counts.has('validator error') && !failures.counts.has('validator warning')) {
      failures.add('validator', `${issues.numErrors} errors and ${issues.numWarnings} warnings`);
    }
  }
  // The codes of the infos and hints, counted, so that what they are is visible.
  const codes = new Map();
  for (const m of issues.messages) {
    if (m.severity >= 2) codes.set(m.code, (codes.get(m.code) ?? 0) + 1);
  }
  const list = [...codes].map(([c, n]) => `${c} x${n}`).join(', ');
  return (
    `validator ${issues.numErrors} errors, ${issues.numWarnings} warnings, ` +
    `${issues.numInfos} infos, ${issues.numHints} hints${list ? ` (${list})` : ''}`
  );
}

// ---------------------------------------------------------------------------------------------
// b. three.js loads it, and finds every node by its name

async function load(file, bytes) {
  // three's FileLoader fetches buffers; Node's fetch reads data: URLs but not file: URLs, so
  // a buffer beside a .gltf is handed over as a data: URL of the file's bytes.
  const manager = new THREE.LoadingManager();
  manager.setURLModifier((url) => {
    if (!url.startsWith('file:')) return url;
    const data = readFileSync(fileURLToPath(url)).toString('base64');
    return `data:application/octet-stream;base64,${data}`;
  });
  const loader = new GLTFLoader(manager);
  const resourcePath = `${pathToFileURL(path.dirname(path.resolve(file))).href}/`;
  return new Promise((resolve, reject) => loader.parse(arrayBufferOf(bytes), resourcePath, resolve, reject));
}

async function checkNames(gltf, failures) {
  const { parser, scene } = gltf;
  const nodes = parser.json.nodes ?? [];
  let found = 0;
  for (let i = 0; i < nodes.length; i++) {
    const name = nodes[i].name;
    if (typeof name !== 'string' || name.length === 0) {
      failures.add('names', `node ${i} has no name`);
      continue;
    }
    const own = await parser.getDependency('node', i);
    const got = scene.getObjectByName(name);
    if (got === undefined) {
      failures.add('names', `node ${i} \`${name}\`: three.js finds no object of that name (it named the node \`${own.name}\`)`);
    } else if (got !== own) {
      failures.add('names', `node ${i} \`${name}\`: three.js finds another object under that name (it named the node \`${own.name}\`)`);
    } else {
      found++;
    }
  }
  return `names ${found}/${nodes.length} found`;
}

// ---------------------------------------------------------------------------------------------
// c. Motion against the CSV output; d. the skinned ribbon

/** The CSV outputs of a run, by series (node + "." + port). */
function csvSeries(dir, run) {
  const series = new Map();
  for (const o of run.outputs ?? []) {
    if (o.kind === 'glTF 2.0' || typeof o.file !== 'string' || !o.file.endsWith('.csv')) continue;
    if (!o.node || !o.port) continue;
    series.set(`${o.node}.${o.port}`, {
      port: `${o.node}.${o.port}`,
      file: o.file,
      path: path.join(dir, o.file),
      csv: null,
    });
  }
  return series;
}

/** The CSV columns of an object's position: [x, y, z] column indices, or an error text. */
function positionColumns(entry, heft) {
  const { port } = entry;
  const csv = entry.csv;
  const candidates =
    heft.point !== undefined
      ? [[`${port}.p${heft.point}.x [m]`, `${port}.p${heft.point}.y [m]`, `${port}.p${heft.point}.z [m]`]]
      : [
          [`${port}.x [m]`, `${port}.y [m]`, `${port}.z [m]`],
          [`${port}.tx [m]`, `${port}.ty [m]`, `${port}.tz [m]`],
        ];
  for (const names of candidates) {
    const idx = names.map((n) => csv.column.get(n));
    if (idx.every((k) => k !== undefined)) return idx;
  }
  return `${entry.file} has no columns ${candidates.map((c) => c.join(', ')).join(' nor ')}`;
}

/** The objects whose world matrix the clip moves: its targets and their descendants. */
function movedBy(clip, scene) {
  const moved = new Set();
  for (const track of clip.tracks) {
    const { nodeName } = THREE.PropertyBinding.parseTrackName(track.name);
    const target = THREE.PropertyBinding.findNode(scene, nodeName);
    if (target) target.traverse((o) => moved.add(o));
  }
  return moved;
}

/** Reads matrix `j` of an accessor of MAT4 (plain or interleaved). */
function matrixAt(attr, j) {
  const e = new Array(16);
  for (let c = 0; c < 16; c++) e[c] = attr.getComponent(j, c);
  return new THREE.Matrix4().fromArray(e);
}

/** One ribbon per skin, bound with three.js's SkinnedMesh; null (and a failure) if it cannot be. */
async function buildRibbon(parser, k, failures) {
  const skin = parser.json.skins[k];
  const joints = skin.joints ?? [];
  if (joints.length === 0) {
    failures.add('skins', `skin ${k} has no joints`);
    return null;
  }
  const bones = await Promise.all(joints.map((j) => parser.getDependency('node', j)));
  let inverses;
  if (skin.inverseBindMatrices !== undefined) {
    const attr = await parser.getDependency('accessor', skin.inverseBindMatrices);
    if (attr.itemSize !== 16 || attr.count < joints.length) {
      failures.add('skins', `skin ${k}: its inverseBindMatrices accessor holds ${attr.count} items of ${attr.itemSize}`);
      return null;
    }
    inverses = joints.map((_, j) => matrixAt(attr, j));
  } else {
    inverses = joints.map(() => new THREE.Matrix4()); // identity (glTF 2.0, section 3.7.3)
  }
  // Bind pose: the world matrix of joint j is the inverse of its inverse bind matrix.
  const at = [];
  const side = [];
  for (let j = 0; j < joints.length; j++) {
    if (Math.abs(inverses[j].determinant()) < 1e-12) {
      failures.add('skins', `skin ${k}: the inverse bind matrix of joint ${j} (node ${joints[j]}) is singular`);
      return null;
    }
    const bind = inverses[j].clone().invert();
    at.push(new THREE.Vector3().setFromMatrixPosition(bind));
    side.push(new THREE.Vector3().setFromMatrixColumn(bind, 0).normalize());
  }
  const positions = [];
  const skinIndex = [];
  const skinWeight = [];
  const pairs = [];
  const pair = (centre, dir, bonesOf, weights, label) => {
    const first = positions.length / 3;
    for (const s of [0.5, -0.5]) {
      const p = centre.clone().addScaledVector(dir, s * RIBBON_WIDTH);
      positions.push(p.x, p.y, p.z);
      skinIndex.push(...bonesOf, ...new Array(4 - bonesOf.length).fill(0));
      skinWeight.push(...weights, ...new Array(4 - weights.length).fill(0));
    }
    pairs.push({ a: first, b: first + 1, label });
  };
  for (let j = 0; j < joints.length; j++) {
    pair(at[j], side[j], [j], [1], `joint ${j}`);
    // Between consecutive joints of a chain: joint j + 1 is a child of joint j. (A baked
    // chain's joints are listed root to tip; in another skeleton, neighbours in the list
    // need not be neighbours in the body.)
    if (j + 1 < joints.length && (parser.json.nodes[joints[j]].children ?? []).includes(joints[j + 1])) {
      const mid = at[j].clone().add(at[j + 1]).multiplyScalar(0.5);
      const dir = side[j].clone().add(side[j + 1]);
      if (dir.length() < 1e-9) {
        failures.add('skins', `skin ${k}: joints ${j} and ${j + 1} have opposite X axes in the bind pose`);
        return null;
      }
      pair(mid, dir.normalize(), [j, j + 1], [0.5, 0.5], `between joints ${j} and ${j + 1}`);
    }
  }
  const geometry = new THREE.BufferGeometry();
  geometry.setAttribute('position', new THREE.Float32BufferAttribute(positions, 3));
  geometry.setAttribute('skinIndex', new THREE.Uint16BufferAttribute(skinIndex, 4));
  geometry.setAttribute('skinWeight', new THREE.Float32BufferAttribute(skinWeight, 4));
  const mesh = new THREE.SkinnedMesh(geometry, new THREE.MeshBasicMaterial());
  // A glTF skinned mesh is in the space of the bind pose: the bind matrix is the identity.
  mesh.bind(new THREE.Skeleton(bones, inverses), new THREE.Matrix4());
  const position = geometry.getAttribute('position');
  const va = new THREE.Vector3();
  const vb = new THREE.Vector3();
  for (const p of pairs) {
    p.width = va.fromBufferAttribute(position, p.a).distanceTo(vb.fromBufferAttribute(position, p.b));
  }
  const twists = [];
  for (let j = 0; j + 1 < joints.length; j++) {
    if ((parser.json.nodes[joints[j]].children ?? []).includes(joints[j + 1])) {
      const bindParent = inverses[j].clone().invert();
      const bindChild = inverses[j + 1].clone().invert();
      twists.push({
        parent: bones[j],
        child: bones[j + 1],
        bind: twistOf(bindParent, bindChild),
        label: `between joints ${j} and ${j + 1}`,
      });
    }
  }
  return {
    k,
    name: skin.name,
    mesh,
    pairs,
    twists,
    position,
    worst: { ratio: Infinity, where: 'nowhere' },
    plain: { ratio: Infinity, where: 'nowhere' },
  };
}

/** The signed twist about the child's +Y of the child's X axis beyond the parent's X axis
 *  carried along by the shortest arc between their +Y axes. `pm`, `cm`: world matrices. */
function twistOf(pm, cm) {
  const py = new THREE.Vector3().setFromMatrixColumn(pm, 1).normalize();
  const px = new THREE.Vector3().setFromMatrixColumn(pm, 0).normalize();
  const cy = new THREE.Vector3().setFromMatrixColumn(cm, 1).normalize();
  const cx = new THREE.Vector3().setFromMatrixColumn(cm, 0).normalize();
  const carried = px.applyQuaternion(new THREE.Quaternion().setFromUnitVectors(py, cy));
  const cross = new THREE.Vector3().crossVectors(carried, cx);
  return Math.atan2(cross.dot(cy), carried.dot(cx));
}

/** The ribbon now, skinned by three.js: each pair's width against its bind width (printed),
 *  and each bone's twist beyond its bind twist (the check). */
function measureRibbon(ribbon, frame, worst) {
  const va = new THREE.Vector3();
  const vb = new THREE.Vector3();
  for (const p of ribbon.pairs) {
    ribbon.mesh.applyBoneTransform(p.a, va.fromBufferAttribute(ribbon.position, p.a));
    ribbon.mesh.applyBoneTransform(p.b, vb.fromBufferAttribute(ribbon.position, p.b));
    const ratio = va.distanceTo(vb) / p.width;
    if (!(ratio >= ribbon.plain.ratio)) {
      ribbon.plain.ratio = ratio;
      ribbon.plain.where = `${p.label}, frame ${frame}`;
    }
    if (!(ratio >= worst.plain)) worst.plain = ratio;
  }
  for (const t of ribbon.twists) {
    let d = twistOf(t.parent.matrixWorld, t.child.matrixWorld) - t.bind;
    d = Math.atan2(Math.sin(d), Math.cos(d));
    const ratio = Math.cos(d / 2);
    if (!(ratio >= worst.ratio)) {
      worst.ratio = ratio;
      worst.where = `skin ${ribbon.k} ${t.label}, frame ${frame}`;
    }
    if (!(ratio >= ribbon.worst.ratio)) {
      ribbon.worst.ratio = ratio;
      ribbon.worst.where = `${t.label}, frame ${frame}`;
    }
  }
}

async function checkMotion(gltf, dir, run, bakeEntry, failures) {
  const { parser, scene } = gltf;
  const contract = parser.json.asset?.extras?.heft;
  const rate = parseRate(contract?.frame_rate);
  const problems = [];
  if (typeof contract !== 'object' || contract === null) problems.push('asset.extras.heft is missing');
  else {
    if (!rate) problems.push(`frame_rate ${JSON.stringify(contract.frame_rate)} is not "num/den"`);
    if (!Number.isInteger(contract.first_frame)) problems.push(`first_frame ${JSON.stringify(contract.first_frame)} is not an integer`);
    if (!Number.isInteger(contract.frame_count) || contract.frame_count < 1) {
      problems.push(`frame_count ${JSON.stringify(contract.frame_count)} is not a positive integer`);
    }
    if (contract.axes !== 'z_up' && contract.axes !== 'y_up') problems.push(`axes ${JSON.stringify(contract.axes)} is neither "z_up" nor "y_up"`);
  }
  for (const p of problems) failures.add('motion contract', p);

  // Every object that shows a series, checked for the contract's fields.
  const series = csvSeries(dir, run);
  const shown = [];
  scene.traverse((o) => {
    const h = o.userData?.heft;
    if (h === undefined) return;
    if (typeof h !== 'object' || h === null || typeof h.name !== 'string') {
      failures.add('motion contract', `\`${o.name}\`: extras.heft ${JSON.stringify(h)} has no "name"`);
      return;
    }
    if (h.series === undefined) return; // a node that shows no series (a group, an anchor)
    if (typeof h.series !== 'string') {
      failures.add('motion contract', `\`${o.name}\`: extras.heft.series ${JSON.stringify(h.series)} is not a name`);
      return;
    }
    if (h.point !== undefined && !(Number.isInteger(h.point) && h.point >= 0)) {
      failures.add('motion contract', `\`${o.name}\`: extras.heft.point ${JSON.stringify(h.point)} is not a point index`);
      return;
    }
    shown.push(o);
  });

  // Each baked chain (parent-child objects showing one series) has a skin whose joints are
  // the chain's nodes, root to tip, so that a mesh can be skinned to it.
  const skinJoints = new Set((parser.json.skins ?? []).map((sk) => (sk.joints ?? []).join(',')));
  const isShown = new Set(shown);
  const sameSeries = (a, b) => a?.userData?.heft?.series !== undefined && a.userData.heft.series === b.userData.heft.series;
  let chainCount = 0;
  for (const o of shown) {
    const down = (x) => x.children.filter((c) => isShown.has(c) && sameSeries(c, x));
    if ((o.parent && isShown.has(o.parent) && sameSeries(o.parent, o)) || down(o).length === 0) continue;
    chainCount++;
    const chain = [o];
    for (let next = down(o); next.length === 1; next = down(next[0])) chain.push(next[0]);
    const indices = chain.map((c) => parser.associations.get(c)?.nodes);
    if (!skinJoints.has(indices.join(','))) {
      failures.add('skins', `the chain of ${chain.length} joints from \`${o.userData.heft.name}\` (nodes ${indices[0]}..${indices[indices.length - 1]}) has no skin with exactly its joints, root to tip`);
    }
  }

  // The series that must be compared: those the bake declares (run.json) or its nodes show,
  // and that the run also wrote as CSV.
  const declared = new Set(Array.isArray(bakeEntry.columns) ? bakeEntry.columns : []);
  for (const o of shown) declared.add(o.userData.heft.series);
  const counterparts = [...declared].filter((s) => series.has(s)).sort();

  // The comparisons to make: object, series entry, columns.
  const targets = [];
  for (const o of shown) {
    const h = o.userData.heft;
    const entry = series.get(h.series);
    if (!entry) continue; // a series baked but not written as CSV
    if (entry.csv === null) {
      try {
        entry.csv = readCsv(entry.path);
      } catch (e) {
        failures.add('csv', e.message);
        entry.csv = { header: [], rows: new Map(), column: new Map() };
      }
    }
    const cols = positionColumns(entry, h);
    if (typeof cols === 'string') {
      failures.add('motion', `\`${h.name}\` (series ${h.series}${h.point !== undefined ? ` point ${h.point}` : ''}): ${cols}`);
      continue;
    }
    targets.push({ o, h, entry, cols });
  }

  const perSeries = new Map(counterparts.map((s) => [s, { comparisons: 0, points: new Set() }]));
  const worst = { error: 0, where: 'nowhere' };
  const ribbonWorst = { ratio: Infinity, where: 'nowhere', plain: Infinity };
  const skinCount = (parser.json.skins ?? []).length;
  const ribbons = [];
  for (let k = 0; k < skinCount; k++) {
    // The chains heft baked; a character's own skin (in a bake written into its file) moves as
    // its animator keyed it.
    const joints = parser.json.skins[k].joints ?? [];
    if (joints.length > 0 && !joints.some((j) => parser.json.nodes[j]?.extras?.heft)) continue;
    const r = await buildRibbon(parser, k, failures);
    if (r) ribbons.push(r);
  }
  let comparisons = 0;
  const allClips = gltf.animations ?? [];
  const clips = Number.isInteger(contract?.clip) ? allClips.filter((_, k) => k === contract.clip) : allClips;
  let summary;
  if (problems.length === 0) {
    const [num, den] = rate;
    const frames = contract.frame_count;
    let keyTimes = null;
    if (Number.isInteger(contract.time_accessor)) {
      const attr = await parser.getDependency('accessor', contract.time_accessor);
      keyTimes = Array.from({ length: attr.count }, (_, i) => attr.getX(i));
      if (keyTimes.length !== frames) {
        failures.add('motion', `time_accessor ${contract.time_accessor} holds ${keyTimes.length} times for ${frames} frames`);
      }
    }
    const timeOf = (i) => (keyTimes ? keyTimes[i] : (i * den) / num);
    const z_up = contract.axes === 'z_up';
    const world = new THREE.Vector3();
    const compare = (t, i) => {
      const frame = contract.first_frame + i;
      const { o, h, entry, cols } = t;
      const row = entry.csv.rows.get(frame);
      if (!row) {
        failures.add('motion', `${entry.file} has no row for frame ${frame}`);
        return;
      }
      const [x, y, z] = cols.map((c) => row[c]);
      const want = z_up ? [x, z, -y] : [x, y, z];
      o.getWorldPosition(world);
      const err = Math.hypot(world.x - want[0], world.y - want[1], world.z - want[2]);
      comparisons++;
      const s = perSeries.get(h.series);
      if (s) {
        s.comparisons++;
        if (h.point !== undefined) s.points.add(h.point);
      }
      if (!(err <= worst.error)) {
        worst.error = err;
        worst.where = `\`${h.name}\` frame ${frame}`;
      }
    };
    // Each clip on its own mixer, played once and held at its end (a repeating action wraps its
    // last key back to time 0); the objects no clip moves are compared in their rest pose.
    const unmoved = new Set(targets.map((t) => t.o));
    for (const clip of clips) {
      const moved = movedBy(clip, scene);
      for (const o of moved) unmoved.delete(o);
      const want = (frames - 1) * den / num;
      if (keyTimes) {
        if (clip.duration < keyTimes[frames - 1] - 1e-5) {
          failures.add('motion', `clip \`${clip.name}\` lasts ${clip.duration} s, less than its last baked frame at ${keyTimes[frames - 1]} s`);
        }
      } else if (Math.abs(clip.duration - want) > 1e-5) {
        failures.add('motion', `clip \`${clip.name}\` lasts ${clip.duration} s; ${frames} frames at ${num}/${den} fps last ${want} s`);
      }
      const mixer = new THREE.AnimationMixer(scene);
      const action = mixer.clipAction(clip);
      action.setLoop(THREE.LoopOnce, 1);
      action.clampWhenFinished = true;
      action.play();
      const mine = targets.filter((t) => moved.has(t.o));
      for (let i = 0; i < frames; i++) {
        mixer.setTime(timeOf(i));
        scene.updateMatrixWorld(true);
        for (const t of mine) compare(t, i);
        for (const r of ribbons) measureRibbon(r, contract.first_frame + i, ribbonWorst);
      }
      action.stop(); // gives the animated properties back their rest values
      mixer.uncacheRoot(scene);
    }
    const still = targets.filter((t) => unmoved.has(t.o));
    if (still.length > 0 || clips.length === 0) {
      scene.updateMatrixWorld(true);
      for (let i = 0; i < frames; i++) {
        for (const t of still) compare(t, i);
        for (const r of ribbons) if (clips.length === 0) measureRibbon(r, contract.first_frame + i, ribbonWorst);
      }
    }
    if (worst.error > POSITION_TOLERANCE) {
      failures.add('motion', `worst position error ${fmt(worst.error)} m at ${worst.where} is above ${fmt(POSITION_TOLERANCE)} m`);
    }
    // No vacuous pass: every series both baked and written as CSV is compared, at every point.
    for (const [name, s] of perSeries) {
      if (s.comparisons === 0) {
        failures.add('motion', `series ${name} is baked and written to ${series.get(name).file}, but no object of the bake with extras.heft.series = "${name}" was compared`);
        continue;
      }
      const csv = series.get(name).csv;
      const port = series.get(name).port;
      const re = new RegExp(`^${port.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}\\.p(\\d+)\\.x \\[m\\]$`);
      const points = csv.header.map((h) => re.exec(h)).filter(Boolean).map((m) => Number(m[1]));
      const missing = points.filter((p) => !s.points.has(p));
      if (points.length > 0 && missing.length > 0) {
        failures.add('motion', `series ${name}: no object shows point${missing.length > 1 ? 's' : ''} ${missing.slice(0, 8).join(', ')}${missing.length > 8 ? ', ...' : ''} of ${points.length}`);
      }
    }
    summary =
      `motion ${clips.length} clip${clips.length === 1 ? '' : 's'} x ${frames} frames, ` +
      `${comparisons} comparisons over ${counterparts.length} series (${counterparts.join(', ') || 'none'}), ` +
      `worst ${fmt(worst.error)} m at ${worst.where} (limit ${fmt(POSITION_TOLERANCE)} m)`;
  } else {
    summary = `motion not checked (${problems.join('; ')}), series ${counterparts.join(', ') || 'none'}`;
  }
  let skins;
  if (skinCount === 0) skins = `no skins (${chainCount} chains)`;
  else if (ribbonWorst.ratio === Infinity) skins = `skins ${skinCount}, ribbons not measured`;
  else {
    skins =
      `skins ${skinCount} (${chainCount} chains), ribbon width from twist min ${ribbonWorst.ratio.toFixed(4)} ` +
      `at ${ribbonWorst.where} (limit ${RIBBON_MIN_RATIO}); plain skinned width min ${ribbonWorst.plain.toFixed(4)}`;
    for (const r of ribbons) {
      if (!(r.worst.ratio >= RIBBON_MIN_RATIO)) {
        const name = r.name === undefined ? '' : ` \`${r.name}\``;
        failures.add('skins', `skin ${r.k}${name}: twist narrows a ribbon to ${r.worst.ratio.toFixed(4)} of its width ${r.worst.where}`);
      }
    }
  }
  return `${summary}; ${skins}`;
}

// ---------------------------------------------------------------------------------------------

async function checkFile(dir, run, entry) {
  const file = path.join(dir, entry.file);
  const failures = new Failures();
  const figures = [];
  let bytes;
  try {
    bytes = readFileSync(file);
  } catch (e) {
    failures.add('file', String(e.message ?? e));
    return { file, figures, failures };
  }
  try {
    figures.push(await validate(file, bytes, failures));
  } catch (e) {
    failures.add('validator', `could not run: ${e}`);
  }
  let gltf;
  try {
    gltf = await load(file, bytes);
  } catch (e) {
    failures.add('three.js', `GLTFLoader.parse failed: ${e?.message ?? e}`);
    return { file, figures, failures };
  }
  figures.push(await checkNames(gltf, failures));
  figures.push(await checkMotion(gltf, dir, run, entry, failures));
  return { file, figures, failures };
}

async function main(dirs) {
  if (dirs.length === 0) {
    console.error('usage: node check_bake.mjs DIR...   (output folders of `heft run`)');
    return 2;
  }
  let checked = 0;
  let failed = 0;
  for (const dir of dirs) {
    let run;
    try {
      run = JSON.parse(readFileSync(path.join(dir, 'run.json'), 'utf8'));
    } catch (e) {
      console.log(`FAIL ${dir}: cannot read run.json: ${e.message}`);
      failed++;
      continue;
    }
    const bakes = (run.outputs ?? []).filter((o) => o.kind === 'glTF 2.0' && /\.(glb|gltf)$/i.test(o.file ?? ''));
    if (bakes.length === 0) console.log(`${dir}: no glTF bakes in run.json`);
    for (const entry of bakes) {
      const { file, figures, failures } = await checkFile(dir, run, entry);
      checked++;
      console.log(`${failures.any ? 'FAIL' : 'ok  '} ${file}: ${figures.join('; ')}`);
      if (failures.any) {
        failed++;
        for (const line of failures.report()) console.log(`     ${line}`);
      }
    }
  }
  if (checked === 0 && failed === 0) {
    console.log('FAIL: no glTF bake found in the given folders');
    return 1;
  }
  console.log(`summary: ${checked} bake files checked, ${failed} with failures`);
  return failed === 0 ? 0 : 1;
}

process.exitCode = await main(process.argv.slice(2));
