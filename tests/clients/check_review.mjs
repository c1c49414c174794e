// Opens heft's review pages in headless Chromium and reads them back, with Node's standard
// library only: Chromium is driven through the DevTools protocol over a pipe
// (--remote-debugging-pipe: JSON messages ended by a NUL byte, written to its fd 3 and read from
// its fd 4).
//
//   node check_review.mjs SPEC.json
//
// SPEC: {"pages": [{"file": "/abs/review.html", "shot": "/abs/shot.png", "eval": ["js", ...],
// "wait": "js"}]}. For each page: a 1280 x 900 window opens the file:// address, waits for the
// page's hook (`window.heftReview.ready`, or the `wait` expression), evaluates each expression in
// order (awaiting promises), and keeps a screenshot of the whole page. Everything the page logs as an error (console.error, an
// uncaught exception, a failed load) and every request that is not for a file:, data: or blob:
// address is recorded. Prints {"pages": [{"file", "errors": [...], "requests": [...],
// "results": [...], "view": {x, y, width, height}}]} as JSON; exits 1 when a page has an error or
// made a request, 2 when Chromium cannot be driven.
import { spawn } from "node:child_process";
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { pathToFileURL } from "node:url";

const spec = JSON.parse(readFileSync(process.argv[2], "utf8"));
const browser = process.env.HEFT_CHROMIUM || "chromium";
const profile = mkdtempSync(join(tmpdir(), "heft-review-"));
const PAGE_TIMEOUT_MS = Number(process.env.HEFT_PAGE_TIMEOUT_MS || 300000);

const chrome = spawn(
  browser,
  [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--no-first-run",
    "--no-default-browser-check",
    "--disable-extensions",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--mute-audio",
    "--hide-scrollbars",
    "--remote-debugging-pipe",
    `--user-data-dir=${profile}`,
    "about:blank",
  ],
  { stdio: ["ignore", "ignore", "pipe", "pipe", "pipe"] },
);
let chromeLog = "";
chrome.stderr.on("data", (d) => {
  chromeLog = (chromeLog + d.toString()).slice(-20000);
});
const fail = (message) => {
  process.stderr.write(`check_review: ${message}\n--- chromium's log (end)\n${chromeLog}\n`);
  try {
    chrome.kill("SIGKILL");
  } catch {}
  rmSync(profile, { recursive: true, force: true });
  process.exit(2);
};
chrome.on("error", (e) => fail(`cannot start ${browser}: ${e.message}`));

const toChrome = chrome.stdio[3];
const fromChrome = chrome.stdio[4];
let nextId = 1;
const waiting = new Map();
const listeners = [];
let buffer = Buffer.alloc(0);
fromChrome.on("data", (chunk) => {
  buffer = Buffer.concat([buffer, chunk]);
  let end;
  while ((end = buffer.indexOf(0)) >= 0) {
    const message = JSON.parse(buffer.subarray(0, end).toString("utf8"));
    buffer = buffer.subarray(end + 1);
    if (message.id !== undefined && waiting.has(message.id)) {
      const { resolve, reject, method } = waiting.get(message.id);
      waiting.delete(message.id);
      if (message.error) reject(new Error(`${method}: ${message.error.message}`));
      else resolve(message.result);
    } else if (message.method) {
      for (const l of listeners) l(message);
    }
  }
});
chrome.on("exit", (code, signal) => {
  for (const { reject } of waiting.values()) reject(new Error(`chromium exited (${code ?? signal})`));
  waiting.clear();
});

function send(method, params = {}, sessionId) {
  const id = nextId++;
  const message = { id, method, params };
  if (sessionId) message.sessionId = sessionId;
  return new Promise((resolve, reject) => {
    waiting.set(id, { resolve, reject, method });
    toChrome.write(JSON.stringify(message) + "\0");
  });
}

function once(sessionId, method) {
  return new Promise((resolve) => {
    const l = (m) => {
      if (m.sessionId === sessionId && m.method === method) {
        listeners.splice(listeners.indexOf(l), 1);
        resolve(m.params);
      }
    };
    listeners.push(l);
  });
}

function within(ms, promise, what) {
  let timer;
  return Promise.race([
    promise.finally(() => clearTimeout(timer)),
    new Promise((_, reject) => {
      timer = setTimeout(() => reject(new Error(`${what}: no answer in ${ms / 1000} s`)), ms);
    }),
  ]);
}

async function evaluate(sessionId, expression) {
  const r = await send("Runtime.evaluate", { expression, awaitPromise: true, returnByValue: true }, sessionId);
  if (r.exceptionDetails) {
    const d = r.exceptionDetails;
    throw new Error(`${expression}: ${d.exception?.description || d.text}`);
  }
  return r.result.value;
}

async function check(page) {
  const errors = [];
  const requests = [];
  const { targetId } = await send("Target.createTarget", { url: "about:blank" });
  const { sessionId } = await send("Target.attachToTarget", { targetId, flatten: true });
  const record = (m) => {
    if (m.sessionId !== sessionId) return;
    const p = m.params;
    if (m.method === "Runtime.consoleAPICalled" && (p.type === "error" || p.type === "assert")) {
      errors.push(`console.${p.type}: ${p.args.map((a) => a.value ?? a.description ?? "").join(" ")}`);
    } else if (m.method === "Runtime.exceptionThrown") {
      const d = p.exceptionDetails;
      errors.push(`uncaught: ${d.exception?.description || d.text} (line ${d.lineNumber + 1})`);
    } else if (m.method === "Log.entryAdded" && p.entry.level === "error") {
      errors.push(`log: ${p.entry.text}${p.entry.url ? ` (${p.entry.url})` : ""}`);
    } else if (m.method === "Network.requestWillBeSent") {
      const url = p.request.url;
      if (!/^(file|data|blob):/.test(url)) requests.push(url);
    }
  };
  listeners.push(record);
  await send("Runtime.enable", {}, sessionId);
  await send("Log.enable", {}, sessionId);
  await send("Network.enable", {}, sessionId);
  await send("Page.enable", {}, sessionId);
  await send(
    "Emulation.setDeviceMetricsOverride",
    { width: 1280, height: 900, deviceScaleFactor: 1, mobile: false },
    sessionId,
  );
  const loaded = once(sessionId, "Page.loadEventFired");
  const started = Date.now();
  await send("Page.navigate", { url: pathToFileURL(page.file).href }, sessionId);
  await within(PAGE_TIMEOUT_MS, loaded, `loading ${page.file}`);
  const results = [];
  let view = null;
  try {
    const wait =
      page.wait || "window.heftReview ? window.heftReview.ready.then(() => true) : Promise.reject(new Error('no window.heftReview'))";
    await within(PAGE_TIMEOUT_MS, evaluate(sessionId, wait), `reading ${page.file}`);
    const readySeconds = (Date.now() - started) / 1000;
    for (const e of page.eval || []) results.push(await within(PAGE_TIMEOUT_MS, evaluate(sessionId, e), e));
    view = await evaluate(
      sessionId,
      "(() => { const v = document.getElementById('view'); if (!v) return null; const r = v.getBoundingClientRect(); return { x: r.x + scrollX, y: r.y + scrollY, width: r.width, height: r.height }; })()",
    );
    const metrics = await send("Page.getLayoutMetrics", {}, sessionId);
    const size = metrics.cssContentSize || metrics.contentSize;
    const shot = await send(
      "Page.captureScreenshot",
      {
        format: "png",
        captureBeyondViewport: true,
        clip: { x: 0, y: 0, width: Math.ceil(size.width), height: Math.ceil(size.height), scale: 1 },
      },
      sessionId,
    );
    if (page.shot) writeFileSync(page.shot, Buffer.from(shot.data, "base64"));
    // Late errors (a draw after the last expression) count too.
    await new Promise((r) => setTimeout(r, 200));
    listeners.splice(listeners.indexOf(record), 1);
    await send("Target.closeTarget", { targetId });
    return { file: page.file, errors, requests, results, view, ready_seconds: readySeconds };
  } catch (e) {
    errors.push(`check: ${e.message}`);
    return { file: page.file, errors, requests, results, view };
  }
}

const out = { pages: [] };
try {
  await within(60000, send("Browser.getVersion"), "starting chromium").then((v) => {
    out.browser = v.product;
  });
  for (const page of spec.pages) out.pages.push(await check(page));
} catch (e) {
  fail(e.message);
}
const exited = new Promise((resolve) => {
  if (chrome.exitCode !== null || chrome.signalCode !== null) resolve();
  else chrome.on("exit", resolve);
});
await send("Browser.close").catch(() => {});
await within(10000, exited, "closing chromium").catch(() => chrome.kill("SIGKILL"));
rmSync(profile, { recursive: true, force: true });
process.stdout.write(JSON.stringify(out, null, 1) + "\n");
process.exit(out.pages.some((p) => p.errors.length > 0 || p.requests.length > 0) ? 1 : 0);
