// Drives headless Chromium over the DevTools protocol to check a rendered basefit matrix page
// the way a reader uses it: real mouse clicks and key presses, assertions read from the DOM.
//
//   node --experimental-websocket tests/browser/check-page.mjs PAGE.html OUTDIR [CHROMIUM]
//
// Prints one line per check and a closing "N passed, N failed" line; exits 1 on any failure.
// Writes OUTDIR/page.png (wide, with a detail panel open) and OUTDIR/page-narrow.png.
import { spawn } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { pathToFileURL } from 'node:url';

const [pageArg, outArg, chromiumArg] = process.argv.slice(2);
if (!pageArg || !outArg) {
  console.error('usage: check-page.mjs PAGE.html OUTDIR [CHROMIUM]');
  process.exit(2);
}
if (typeof WebSocket !== 'function') {
  console.error('this Node has no WebSocket; run it with --experimental-websocket (Node 20-21) or Node 22+');
  process.exit(2);
}
const page = path.resolve(pageArg);
const outDir = path.resolve(outArg);
fs.mkdirSync(outDir, { recursive: true });
const chromium = chromiumArg || 'chromium';
const profile = fs.mkdtempSync(path.join(os.tmpdir(), 'basefit-browser-'));
const WIDE = { width: 1440, height: 1000 };

let passed = 0;
let failed = 0;
function check(name, ok, detail) {
  if (ok) {
    passed += 1;
    console.log(`ok - ${name}`);
  } else {
    failed += 1;
    console.log(`not ok - ${name}${detail ? `: ${detail}` : ''}`);
  }
}

const browser = spawn(chromium, [
  '--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run',
  '--disable-background-networking', '--disable-component-update', '--disable-sync',
  '--hide-scrollbars', '--mute-audio', `--user-data-dir=${profile}`,
  '--remote-debugging-port=0', `--window-size=${WIDE.width},${WIDE.height}`, 'about:blank',
], { stdio: ['ignore', 'ignore', 'pipe'] });
let browserLog = '';
browser.stderr.on('data', (d) => { browserLog += d; });

const sleep = (ms) => new Promise((r) => setTimeout(r, ms));
function cleanup() {
  if (browser.exitCode === null) browser.kill('SIGKILL');
  try { fs.rmSync(profile, { recursive: true, force: true }); } catch { /* best effort */ }
}
const guard = setTimeout(() => {
  console.log('not ok - the check finished within 90 s');
  cleanup();
  process.exit(1);
}, 90_000);

async function devtoolsPort() {
  const file = path.join(profile, 'DevToolsActivePort');
  for (let i = 0; i < 200; i += 1) {
    if (fs.existsSync(file)) {
      const port = fs.readFileSync(file, 'utf8').split('\n')[0].trim();
      if (port) return port;
    }
    if (browser.exitCode !== null) break;
    await sleep(100);
  }
  throw new Error(`chromium did not open its debugging port\n${browserLog.slice(-2000)}`);
}

function connect(url) {
  return new Promise((resolve, reject) => {
    const ws = new WebSocket(url);
    let next = 1;
    const waiting = new Map();
    const listeners = [];
    ws.onmessage = (ev) => {
      const msg = JSON.parse(ev.data);
      if (msg.id && waiting.has(msg.id)) {
        const { ok, ko } = waiting.get(msg.id);
        waiting.delete(msg.id);
        if (msg.error) ko(new Error(`${msg.error.message} (${msg.error.code})`));
        else ok(msg.result);
      } else if (msg.method) {
        for (const l of listeners) l(msg);
      }
    };
    ws.onerror = () => reject(new Error(`cannot connect to ${url}`));
    ws.onopen = () => resolve({
      send(method, params = {}) {
        const id = next++;
        ws.send(JSON.stringify({ id, method, params }));
        return new Promise((ok, ko) => waiting.set(id, { ok, ko }));
      },
      on(fn) { listeners.push(fn); },
      once(method) {
        return new Promise((ok) => listeners.push((m) => { if (m.method === method) ok(m.params); }));
      },
      close() { ws.close(); },
    });
  });
}

async function main() {
  const port = await devtoolsPort();
  const targets = await (await fetch(`http://127.0.0.1:${port}/json/list`)).json();
  const target = targets.find((t) => t.type === 'page');
  if (!target) throw new Error('chromium opened no page');
  const cdp = await connect(target.webSocketDebuggerUrl);
  const problems = [];
  const requests = [];
  cdp.on((m) => {
    if (m.method === 'Runtime.exceptionThrown') problems.push(m.params.exceptionDetails.exception?.description || m.params.exceptionDetails.text);
    if (m.method === 'Runtime.consoleAPICalled' && (m.params.type === 'error' || m.params.type === 'assert')) problems.push(m.params.args.map((a) => a.value ?? a.description).join(' '));
    if (m.method === 'Page.javascriptDialogOpening') {
      problems.push(`a dialog opened: ${m.params.message}`);
      cdp.send('Page.handleJavaScriptDialog', { accept: false });
    }
    if (m.method === 'Network.requestWillBeSent') requests.push(m.params.request.url);
  });
  await cdp.send('Page.enable');
  await cdp.send('Runtime.enable');
  await cdp.send('Network.enable');
  await cdp.send('Emulation.setDeviceMetricsOverride', { ...WIDE, deviceScaleFactor: 1, mobile: false });
  const loaded = cdp.once('Page.loadEventFired');
  const url = pathToFileURL(page).href;
  await cdp.send('Page.navigate', { url });
  await loaded;

  const js = async (expr) => {
    const r = await cdp.send('Runtime.evaluate', { expression: `(() => { ${expr} })()`, returnByValue: true, awaitPromise: true });
    if (r.exceptionDetails) throw new Error(`page script failed: ${r.exceptionDetails.exception?.description || r.exceptionDetails.text}`);
    return r.result.value;
  };
  // Helpers installed in the page for the assertions below; they only read the DOM.
  await js(`
    window.__t = {
      data: JSON.parse(document.getElementById('basefit-data').textContent),
      cells: () => Array.from(document.querySelectorAll('#grid td.cell')),
      vis: (el) => el.checkVisibility({ visibilityProperty: true }),
      box: (el) => { el.scrollIntoView({ block: 'center', inline: 'center' }); const r = el.getBoundingClientRect(); return { x: r.left + r.width / 2, y: r.top + r.height / 2 }; },
    };`);
  const click = async (selector) => {
    const at = await js(`const el = document.querySelector(${JSON.stringify(selector)}); if (!el) return null; const p = __t.box(el); const hit = document.elementFromPoint(p.x, p.y); return { ...p, hits: !!hit && (hit === el || el.contains(hit) || hit.contains(el) || hit.closest('label') === el.closest('label')) };`);
    if (!at) throw new Error(`nothing matches ${selector}`);
    for (const type of ['mouseMoved', 'mousePressed', 'mouseReleased']) {
      await cdp.send('Input.dispatchMouseEvent', { type, x: at.x, y: at.y, button: 'left', clickCount: 1 });
    }
    await sleep(50);
    return at.hits;
  };
  const key = async (k, code, keyCode) => {
    for (const type of ['keyDown', 'keyUp']) {
      await cdp.send('Input.dispatchKeyEvent', { type, key: k, code, windowsVirtualKeyCode: keyCode, ...(k === 'Enter' && type === 'keyDown' ? { text: '\r' } : {}) });
    }
    await sleep(30);
  };

  // One cell per (package, image), each pair exactly once, in matrix order.
  const grid = await js(`
    const d = __t.data.matrix;
    const want = [];
    d.packages.forEach((p) => d.images.forEach((i) => want.push(p.name + '\\u0000' + i.id)));
    const got = __t.cells().map((td) => td.dataset.package + '\\u0000' + td.dataset.image);
    return { want: want.length, got: got.length, same: JSON.stringify(want) === JSON.stringify(got), rows: d.packages.length, images: d.images.length };`);
  check(`grid has one cell per (package, image): ${grid.rows} x ${grid.images} = ${grid.want}`, grid.got === grid.want && grid.same, `found ${grid.got} cells, order matches: ${grid.same}`);

  const safety = await js(`
    return {
      scripts: document.scripts.length,
      injected: document.querySelectorAll('body b, body img, body iframe, [onerror], [onload]').length,
      notice: document.getElementById('notice').innerText.includes(__t.data.notice) && __t.vis(document.getElementById('notice')),
      controls: __t.vis(document.getElementById('controls')),
    };`);
  check('no element or script came from the input', safety.scripts === 2 && safety.injected === 0, JSON.stringify(safety));
  check('the notice is visible', safety.notice);
  check('the script ran and showed the filters', safety.controls);

  // Unticking a family hides exactly that family's columns.
  const family = await js(`
    const boxes = Array.from(document.querySelectorAll('#filter-family input'));
    const counts = boxes.map((b) => __t.cells().filter((td) => td.dataset.family === b.dataset.family).length);
    const i = counts.indexOf(Math.min(...counts));
    return boxes.length > 1 ? { id: boxes[i].id, family: boxes[i].dataset.family } : null;`);
  if (family) {
    const hit = await click(`#${family.id}`);
    const r = await js(`
      const bad = __t.cells().filter((td) => __t.vis(td) === (td.dataset.family === ${JSON.stringify(family.family)}));
      const heads = Array.from(document.querySelectorAll('#grid th.col-image')).filter((h) => __t.vis(h) === (h.dataset.family === ${JSON.stringify(family.family)}));
      return { checked: document.getElementById(${JSON.stringify(family.id)}).checked, bad: bad.length, heads: heads.length, hidden: __t.cells().filter((td) => !__t.vis(td)).length };`);
    check(`unticking family "${family.family}" hides exactly its ${r.hidden} cells and its column headers`, hit && !r.checked && r.bad === 0 && r.heads === 0, JSON.stringify(r));
    await click(`#${family.id}`);
  } else {
    check('the page offers a family filter', await js(`return document.querySelectorAll('#filter-family input').length === 1;`));
  }

  // Unticking an outcome hides its cells, and rows left with nothing to show.
  const outcome = await js(`
    const order = ['fails', 'installs', 'at-risk', 'undecided'];
    return order.find((o) => __t.cells().some((td) => td.dataset.outcome === o)) || null;`);
  if (outcome) {
    const hit = await click(`#filter-outcome-${outcome}`);
    const r = await js(`
      const o = ${JSON.stringify(outcome)};
      const rows = Array.from(document.querySelectorAll('#grid tbody tr'));
      let bad = 0, shown = 0;
      for (const tr of rows) {
        const tds = Array.from(tr.querySelectorAll('td.cell'));
        const rowKept = tds.some((td) => td.dataset.outcome !== o && td.dataset.outcome !== 'missing');
        for (const td of tds) {
          const want = rowKept && td.dataset.outcome !== o && td.dataset.outcome !== 'missing';
          if (__t.vis(td) !== want) bad += 1;
          if (want) shown += 1;
        }
      }
      return { bad, shown, status: document.getElementById('filter-status').textContent };`);
    check(`unticking outcome "${outcome}" hides exactly its cells (${r.shown} stay: ${r.status})`, hit && r.bad === 0, JSON.stringify(r));
    await click(`#filter-outcome-${outcome}`);
    const all = await js(`return __t.cells().every(__t.vis);`);
    check('ticking the filters again shows every cell', all);
  }

  // Clicking a cell opens its detail panel with what the data says about it.
  const picks = await js(`
    const d = __t.data.matrix;
    const pick = (f) => { const td = __t.cells().find((td) => td.dataset.index !== undefined && f(d.cells[Number(td.dataset.index)])); return td ? Number(td.dataset.index) : null; };
    return {
      fails: pick((c) => c.outcome === 'fails' && c.explanation && c.explanation.length),
      installs: pick((c) => c.outcome === 'installs' && c.closure && c.closure.length),
      recorded: pick((c) => c.recorded && /^surprise/.test(c.recorded.verdict)),
    };`);
  for (const [what, index] of Object.entries(picks)) {
    if (index === null) continue;
    const hit = await click(`#grid td.cell[data-index="${index}"]`);
    const r = await js(`
      const c = __t.data.matrix.cells[${index}];
      const panel = document.getElementById('detail');
      const text = panel.innerText;
      const wants = [].concat(
        c.outcome === 'fails' ? [c.explanation[0]] : [],
        (c.closure || []).map((p) => p.version),
        (c.missing_system_packages || []),
        c.recorded ? [c.recorded.verdict, c.recorded.detail] : []);
      const missing = wants.filter((w) => !text.includes(w.replace(/\\s+/g, ' ').trim()));
      return { open: panel.dataset.open === 'true' && __t.vis(panel), same: panel.dataset.package === c.package && panel.dataset.image === c.image, missing,
               selected: document.querySelector('#grid td.cell[data-index="${index}"]').getAttribute('aria-selected') === 'true' };`);
    check(`clicking a ${what} cell opens its detail panel`, hit && r.open && r.same && r.selected && r.missing.length === 0, JSON.stringify(r));
  }

  // Keyboard: arrows move the focus between cells, Enter opens the panel, Escape returns.
  const kb = await js(`
    const first = document.querySelector('#grid td.cell[data-row="0"][data-col="0"]');
    if (!first || !document.querySelector('#grid td.cell[data-row="1"][data-col="1"]')) return null;
    first.focus();
    return { tabStops: __t.cells().filter((td) => td.tabIndex === 0).length, focused: document.activeElement === first && first.tabIndex === 0 };`);
  if (kb) {
    await key('ArrowRight', 'ArrowRight', 39);
    await key('ArrowDown', 'ArrowDown', 40);
    const moved = await js(`const a = document.activeElement; return a && a.matches('td.cell') ? { row: a.dataset.row, col: a.dataset.col, index: a.dataset.index, tab: a.tabIndex } : null;`);
    check('arrow keys move the focus between cells with one tab stop', kb.tabStops === 1 && kb.focused && moved && moved.row === '1' && moved.col === '1' && moved.tab === 0, JSON.stringify({ kb, moved }));
    await key('Enter', 'Enter', 13);
    const opened = await js(`const p = document.getElementById('detail'); const c = __t.data.matrix.cells[${JSON.stringify(moved ? moved.index : '-1')}] || {}; return { open: p.dataset.open === 'true', same: p.dataset.package === c.package && p.dataset.image === c.image, focus: document.activeElement && document.activeElement.id };`);
    check('Enter opens the focused cell in the detail panel', opened.open && opened.same && opened.focus === 'detail-title', JSON.stringify(opened));
    await key('Escape', 'Escape', 27);
    const closed = await js(`const a = document.activeElement; return { open: document.getElementById('detail').dataset.open, back: !!a && a.matches('td.cell') && a.dataset.index === ${JSON.stringify(moved ? moved.index : '')} };`);
    check('Escape closes the panel and returns to the cell', opened.open && closed.open === 'false' && closed.back, JSON.stringify(closed));
  }

  const external = requests.filter((u) => !u.startsWith('file:') && !u.startsWith('data:') && !u.startsWith('about:'));
  check('the page fetched nothing from the network', external.length === 0, external.join(' '));
  check('no script error or dialog', problems.length === 0, problems.join(' | '));

  // Screenshots: the wide page with the most telling cell open, then a phone-sized one.
  const show = picks.recorded ?? picks.fails ?? picks.installs;
  if (show !== null) await click(`#grid td.cell[data-index="${show}"]`);
  await js(`window.scrollTo(0, 0); document.activeElement && document.activeElement.blur(); return true;`);
  const shot = async (file, width) => {
    await cdp.send('Emulation.setDeviceMetricsOverride', { width, height: WIDE.height, deviceScaleFactor: 1, mobile: false });
    await sleep(150);
    const height = await js(`return Math.ceil(document.documentElement.scrollHeight);`);
    await cdp.send('Emulation.setDeviceMetricsOverride', { width, height: Math.min(height, 6000), deviceScaleFactor: 1, mobile: false });
    await sleep(150);
    const { data } = await cdp.send('Page.captureScreenshot', { format: 'png' });
    fs.writeFileSync(path.join(outDir, file), Buffer.from(data, 'base64'));
    return path.join(outDir, file);
  };
  const wide = await shot('page.png', WIDE.width);
  const narrow = await shot('page-narrow.png', 420);
  check(`screenshots written (${path.basename(wide)}, ${path.basename(narrow)})`, fs.statSync(wide).size > 10_000 && fs.statSync(narrow).size > 10_000);
  cdp.close();
}

let code = 0;
try {
  await main();
} catch (e) {
  check('the check ran to the end', false, e && e.stack ? e.stack : String(e));
}
clearTimeout(guard);
cleanup();
console.log(`${passed} passed, ${failed} failed`);
code = failed > 0 ? 1 : 0;
process.exit(code);
