// basefit support matrix: filters, keyboard navigation and the cell detail panel.
// Everything from the data is put on the page as text nodes, never as markup.
(() => {
  'use strict';
  const byId = (id) => document.getElementById(id);
  let payload = {};
  try {
    payload = JSON.parse(byId('basefit-data').textContent || '{}');
  } catch (e) {
    payload = {};
  }
  const matrix = payload.matrix || { images: [], packages: [], cells: [] };
  const labels = payload.labels || { outcomes: {}, causes: {}, marks: {} };
  const commands = payload.install_commands || {};

  const grid = byId('grid');
  const rows = grid && grid.tBodies[0] ? Array.from(grid.tBodies[0].rows) : [];
  const cells = grid ? Array.from(grid.querySelectorAll('td.cell')) : [];
  const heads = grid ? Array.from(grid.querySelectorAll('th.col-image, td.foot')) : [];
  const cards = Array.from(document.querySelectorAll('.image-summary'));
  const familyBoxes = Array.from(document.querySelectorAll('#filter-family input[type="checkbox"]'));
  const outcomeBoxes = Array.from(document.querySelectorAll('#filter-outcome input[type="checkbox"]'));
  const search = byId('filter-package');
  const status = byId('filter-status');
  const detail = byId('detail');
  const detailTitle = byId('detail-title');
  const detailBody = byId('detail-body');
  const detailClose = byId('detail-close');
  const emptyNote = byId('grid-empty');
  // What works only with this script stays hidden in readers that do not run it.
  for (const node of document.querySelectorAll('[data-needs-script]')) node.hidden = false;

  // Bidirectional controls could make a name read as another; show them as a replacement mark.
  const clean = (s) => String(s == null ? '' : s).replace(/[\u061C\u200E\u200F\u202A-\u202E\u2066-\u2069]/g, '\uFFFD');
  const el = (tag, attrs, ...kids) => {
    const node = document.createElement(tag);
    for (const [k, v] of Object.entries(attrs || {})) {
      if (k === 'class') node.className = v;
      else node.setAttribute(k, v);
    }
    for (const kid of kids) {
      if (kid == null || kid === false) continue;
      node.append(typeof kid === 'string' || typeof kid === 'number' ? clean(kid) : kid);
    }
    return node;
  };

  const at = [];
  for (const td of cells) {
    const r = Number(td.dataset.row);
    const c = Number(td.dataset.col);
    (at[r] = at[r] || [])[c] = td;
  }
  const shown = (td) => !td.classList.contains('col-off') && !td.classList.contains('out-off') && !td.parentElement.hidden;

  function applyFilters() {
    const families = new Set(familyBoxes.filter((b) => b.checked).map((b) => b.dataset.family));
    const outcomes = new Set(outcomeBoxes.filter((b) => b.checked).map((b) => b.dataset.outcome));
    const everyOutcome = outcomes.size === outcomeBoxes.length;
    const needle = search ? search.value.trim().toLowerCase() : '';
    for (const h of heads) h.classList.toggle('col-off', !families.has(h.dataset.family));
    for (const card of cards) card.classList.toggle('dimmed', !families.has(card.dataset.family));
    let visibleCells = 0;
    let visibleRows = 0;
    for (const tr of rows) {
      const nameOk = !needle || (tr.dataset.package || '').toLowerCase().includes(needle);
      let n = 0;
      for (const td of tr.querySelectorAll('td.cell')) {
        const columnOn = families.has(td.dataset.family);
        const outcome = td.dataset.outcome;
        const outcomeOn = outcome === 'missing' ? everyOutcome : outcomes.has(outcome);
        td.classList.toggle('col-off', !columnOn);
        td.classList.toggle('out-off', columnOn && !outcomeOn);
        if (columnOn && outcomeOn) n += 1;
      }
      tr.hidden = !(nameOk && n > 0);
      if (!tr.hidden) {
        visibleRows += 1;
        visibleCells += n;
      }
    }
    if (status) {
      status.textContent = `Showing ${visibleCells} of ${cells.length} cells, ${visibleRows} of ${rows.length} packages`;
    }
    if (emptyNote) emptyNote.hidden = visibleCells > 0 || cells.length === 0;
    keepTabStop();
  }

  // One cell is in the tab order at a time (a roving tab stop); arrows move between cells.
  let tabStop = cells.find((td) => td.tabIndex === 0) || null;
  function setTabStop(td, focus) {
    if (!td) return;
    if (tabStop && tabStop !== td) tabStop.tabIndex = -1;
    td.tabIndex = 0;
    tabStop = td;
    if (focus) td.focus();
  }
  function keepTabStop() {
    if (tabStop && shown(tabStop)) return;
    const first = cells.find(shown);
    if (first) setTabStop(first, false);
  }
  function step(td, dr, dc) {
    let r = Number(td.dataset.row) + dr;
    let c = Number(td.dataset.col) + dc;
    while (at[r] && at[r][c]) {
      if (shown(at[r][c])) return at[r][c];
      r += dr;
      c += dc;
    }
    return null;
  }
  function rowEnd(td, last) {
    const row = at[Number(td.dataset.row)] || [];
    const list = row.filter((x) => x && shown(x));
    return last ? list[list.length - 1] : list[0];
  }

  let selected = null;
  function closeDetail(returnFocus) {
    if (selected) selected.removeAttribute('aria-selected');
    const was = selected;
    selected = null;
    detail.dataset.open = 'false';
    delete detail.dataset.package;
    delete detail.dataset.image;
    detailTitle.textContent = 'Cell detail';
    detailBody.replaceChildren(el('p', { class: 'detail-empty' },
      'Select a cell to see the versions it resolves to, or why it fails, with its native needs and any recorded install.'));
    detailClose.hidden = true;
    if (returnFocus && was) was.focus();
  }

  function section(title, ...kids) {
    return [el('h3', {}, title), ...kids];
  }

  function outcomeBadge(outcome) {
    const o = labels.outcomes[outcome] || { symbol: '', label: outcome };
    return el('span', { class: 'badge' }, el('span', { class: `swatch o-${outcome}`, 'aria-hidden': 'true' }, o.symbol), o.label);
  }

  function openDetail(td, focusPanel) {
    const cell = matrix.cells[Number(td.dataset.index)];
    if (!cell) return;
    if (selected) selected.removeAttribute('aria-selected');
    selected = td;
    td.setAttribute('aria-selected', 'true');
    setTabStop(td, false);
    const row = matrix.packages[Number(td.dataset.row)] || {};
    const image = matrix.images[Number(td.dataset.col)] || {};
    const parts = [];

    const badges = el('div', { class: 'badges' }, outcomeBadge(cell.outcome));
    if (cell.root_version) badges.append(el('span', { class: 'badge badge-plain' }, `version ${cell.root_version}`));
    if (cell.cause) badges.append(el('span', { class: 'badge badge-plain' }, cell.cause));
    parts.push(badges);

    const outcome = labels.outcomes[cell.outcome] || {};
    if (cell.cause && labels.causes[cell.cause]) {
      parts.push(el('p', {}, `${cell.package} ${labels.causes[cell.cause]}.`));
    } else if (outcome.meaning && (cell.outcome === 'installs' || cell.outcome === 'at-risk')) {
      parts.push(el('p', {}, `${cell.package} ${outcome.meaning}.`));
    }

    const facts = el('dl', { class: 'facts' });
    const fact = (k, v) => { if (v !== undefined && v !== null && v !== '') facts.append(el('dt', {}, k), el('dd', {}, v)); };
    fact('Priority', row.rank !== undefined ? `rank ${row.rank}, weight ${row.weight}` : '');
    fact('Summary', row.summary || '');
    fact('Image', [image.id, `runtime ${image.runtime}`, image.family, image.platform].filter(Boolean).join(' · '));
    fact('C toolchain', image.toolchain ? (image.cxx === false ? 'C only (no C++)' : 'yes') : 'no');
    parts.push(facts);

    if (cell.closure && cell.closure.length) {
      const body = el('tbody');
      for (const p of cell.closure) {
        body.append(el('tr', { class: p.name === cell.package ? 'root' : '' }, el('td', {}, p.name), el('td', { class: 'code' }, p.version), el('td', {}, p.build)));
      }
      parts.push(...section(`Resolved versions (${cell.closure.length})`,
        el('table', {}, el('thead', {}, el('tr', {}, el('th', {}, 'package'), el('th', {}, 'version'), el('th', {}, 'build'))), body)));
    } else if (cell.root_version) {
      parts.push(...section('Resolved versions', el('p', {}, `${cell.package} ${cell.root_version}, ${cell.closure_size} packages in all; this matrix was planned without closures.`)));
    }

    if (cell.explanation && cell.explanation.length) {
      const title = cell.outcome === 'fails' ? 'Why it fails' : cell.outcome === 'undecided' ? 'Why it is undecided' : 'Why';
      parts.push(...section(title, el('ul', {}, ...cell.explanation.map((l) => el('li', {}, l)))));
    }
    if (cell.blockers && cell.blockers.length) {
      parts.push(...section('Blocked by', el('ul', {}, ...cell.blockers.map((b) => el('li', {}, el('strong', {}, b.package), ': ', b.reason)))));
    }
    if (cell.native_needs && cell.native_needs.length) {
      const items = cell.native_needs.map((n) => el('li', { class: 'need' },
        el('span', { class: 'need-head' }, el('strong', {}, n.library || '(unnamed native build)'),
          el('span', { class: `confidence confidence-${n.confidence}` }, n.confidence), `via ${n.via}`),
        el('span', { class: 'need-evidence' }, (n.evidence || []).join('; '))));
      parts.push(...section('Native needs', el('ul', { class: 'needs' }, ...items)));
    }
    if (cell.missing_system_packages && cell.missing_system_packages.length) {
      const kids = [el('div', { class: 'chips' }, ...cell.missing_system_packages.map((p) => el('span', { class: 'chip' }, p)))];
      const cmd = commands[td.dataset.index];
      if (cmd) {
        const pre = el('pre', {}, cmd);
        const copy = el('button', { type: 'button' }, 'Copy');
        copy.addEventListener('click', () => {
          const done = () => { copy.textContent = 'Copied'; };
          if (navigator.clipboard && navigator.clipboard.writeText) {
            navigator.clipboard.writeText(cmd).then(done, () => selectText(pre));
          } else {
            selectText(pre);
          }
        });
        kids.push(el('div', { class: 'command' }, pre, copy));
      }
      parts.push(...section('Missing system packages', ...kids));
    }
    if (cell.recorded) {
      const rec = cell.recorded;
      const mark = td.dataset.mark || 'unsettled';
      const lines = [el('strong', {}, labels.marks[mark] || rec.verdict)];
      const box = el('div', { class: `callout callout-${mark}` }, ...lines);
      const recFacts = el('dl', { class: 'facts' });
      const add = (k, v) => { if (v !== undefined && v !== null && v !== '') recFacts.append(el('dt', {}, k), el('dd', {}, v)); };
      add('Result', rec.recorded);
      add('Verdict', rec.verdict);
      add('Version', rec.version || '');
      add('Attempts', rec.attempts);
      add('Detail', rec.detail);
      box.append(recFacts);
      parts.push(...section('Recorded install', box));
    }
    parts.push(el('p', { class: 'reminder' }, payload.notice || ''));

    detailTitle.textContent = clean(`${cell.package} on ${cell.image}`);
    detailBody.replaceChildren(...parts);
    detail.dataset.open = 'true';
    detail.dataset.package = cell.package;
    detail.dataset.image = cell.image;
    detailClose.hidden = false;
    if (window.matchMedia && window.matchMedia('(max-width: 1100px)').matches) {
      detail.scrollIntoView({ block: 'start' });
    }
    if (focusPanel) detailTitle.focus();
  }

  function selectText(node) {
    const range = document.createRange();
    range.selectNodeContents(node);
    const sel = window.getSelection();
    sel.removeAllRanges();
    sel.addRange(range);
  }

  if (grid) {
    grid.addEventListener('click', (e) => {
      const td = e.target.closest('td.cell');
      if (td && td.dataset.index !== undefined) openDetail(td, false);
    });
    // Focus that arrives by mouse or script moves the tab stop too, so Tab returns there.
    grid.addEventListener('focusin', (e) => {
      const td = e.target.closest && e.target.closest('td.cell');
      if (td && td !== tabStop) setTabStop(td, false);
    });
    grid.addEventListener('keydown', (e) => {
      const td = e.target.closest('td.cell');
      if (!td) return;
      let next = null;
      switch (e.key) {
        case 'ArrowRight': next = step(td, 0, 1); break;
        case 'ArrowLeft': next = step(td, 0, -1); break;
        case 'ArrowDown': next = step(td, 1, 0); break;
        case 'ArrowUp': next = step(td, -1, 0); break;
        case 'Home': next = e.ctrlKey ? cells.find(shown) : rowEnd(td, false); break;
        case 'End': next = e.ctrlKey ? cells.filter(shown).pop() : rowEnd(td, true); break;
        case 'Enter':
        case ' ':
          if (td.dataset.index !== undefined) openDetail(td, true);
          e.preventDefault();
          return;
        case 'Escape':
          closeDetail(false);
          return;
        default: return;
      }
      e.preventDefault();
      if (next) setTabStop(next, true);
    });
  }
  detail.addEventListener('keydown', (e) => {
    if (e.key === 'Escape') closeDetail(true);
  });
  detailClose.addEventListener('click', () => closeDetail(true));
  for (const box of [...familyBoxes, ...outcomeBoxes]) box.addEventListener('change', applyFilters);
  if (search) search.addEventListener('input', applyFilters);
  const reset = byId('filter-reset');
  if (reset) {
    reset.addEventListener('click', () => {
      for (const box of [...familyBoxes, ...outcomeBoxes]) box.checked = true;
      if (search) search.value = '';
      applyFilters();
    });
  }
  applyFilters();
})();
