// UI wiring: loading a table, choosing a model, showing the result.
// No statistics here: every number shown comes from the wasm `fit_csv`.
// Text from the file or the result goes into the page with textContent only.
import { Engine, EngineError, base64ToBytes } from './engine.js';

const PREVIEW_ROWS = 10;
const DEMO = {
  response: 'energy_mwh',
  transform: 'log',
  terms: 'log(floor_area_m2), cat(climate_zone), mean_outdoor_temp_c, mean_outdoor_temp_c^2, cat(hvac_type), retrofit, building_age',
};

const $ = (id) => document.getElementById(id);
const el = {
  fileInput: $('file-input'),
  demoButton: $('demo-button'),
  dataMessage: $('data-message'),
  dataSummary: $('data-summary'),
  dataFacts: $('data-facts'),
  previewDoubt: $('preview-doubt'),
  preview: $('preview'),
  previewCaption: $('preview-caption'),
  form: $('model-form'),
  responseColumn: $('response-column'),
  responseTransform: $('response-transform'),
  responsePreview: $('response-preview'),
  terms: $('terms'),
  columnsInsert: $('columns-insert'),
  columnButtons: $('column-buttons'),
  intercept: $('intercept'),
  level: $('level'),
  hc3: $('hc3'),
  fitButton: $('fit-button'),
  fitStatus: $('fit-status'),
  modelMessage: $('model-message'),
  result: $('result'),
  staleNote: $('stale-note'),
  modelLine: $('model-line'),
  rowsLine: $('rows-line'),
  coefTable: $('coef-table'),
  copyButton: $('copy-button'),
  copyStatus: $('copy-status'),
  hc3Block: $('hc3-block'),
  hc3Table: $('hc3-table'),
  warningsBlock: $('warnings-block'),
  warningsList: $('warnings-list'),
  cautionsList: $('cautions-list'),
  fitFigures: $('fit-figures'),
  computeFigures: $('compute-figures'),
};

/** What is loaded: kept on the main thread, whatever happens to the worker. */
const state = {
  data: null, // {name, bytes, columns, rowCount, preview}
  report: null,
  fitSeq: 0,
  fitsDone: 0, // fits answered, good or bad (for the tests)
};

// ---------------------------------------------------------------- messages

function showMessage(area, text) {
  area.textContent = text;
  area.hidden = !text;
}

function clearMessage(area) {
  showMessage(area, '');
}

// ------------------------------------------------------------ the engine

const engine = new Engine({
  workerUrl: $('plumbline-worker').textContent.trim(),
  wasm: base64ToBytes($('plumbline-wasm').textContent),
  onTrouble(message, kind) {
    const tail = kind === 'broken'
      ? ''
      : ' A fresh calculation worker has been started. Your data and choices are still here; press Fit to try again.';
    showMessage(el.modelMessage, `${message}${tail}`);
  },
});

// ------------------------------------------------- reading a table (preview)

// The wasm reader decides whether a file is a table and fits from it. This
// small reader only lists the column names and the first rows for the
// preview, following the same rules (RFC 4180 quotes, CR/LF, blank lines
// skipped, blank header names and repeated names renamed as the wasm does).
function splitRecords(text) {
  const records = [];
  let i = 0;
  let line = 1;
  const n = text.length;
  while (i < n) {
    const startLine = line;
    const cells = [];
    let cell = '';
    for (;;) {
      if (text[i] === '"' && cell.trim() === '') {
        cell = '';
        i++;
        for (;;) {
          if (i >= n) return records; // unclosed; the wasm reader has said so already
          if (text[i] === '"' && text[i + 1] === '"') { cell += '"'; i += 2; }
          else if (text[i] === '"') { i++; break; }
          else {
            if (text[i] === '\n') line++;
            cell += text[i];
            i++;
          }
        }
        while (i < n && text[i] !== ',' && text[i] !== '\n' && text[i] !== '\r') { cell += text[i]; i++; }
      }
      if (i >= n) { cells.push(cell); break; }
      const c = text[i];
      if (c === ',') { cells.push(cell); cell = ''; i++; }
      else if (c === '\r' || c === '\n') {
        cells.push(cell);
        if (c === '\r' && text[i + 1] === '\n') i++;
        i++;
        line++;
        break;
      } else { cell += c; i++; }
    }
    if (!cells.every((s) => s.trim() === '')) records.push({ line: startLine, cells });
  }
  return records;
}

function nameColumns(header) {
  const names = header.map((s, j) => (s.trim() === '' ? `column_${j + 1}` : s.trim()));
  for (let j = 0; j < names.length; j++) {
    if (names.slice(0, j).includes(names[j])) {
      const base = names[j];
      let k = 2;
      while (names.includes(`${base}_${k}`)) k++;
      names[j] = `${base}_${k}`;
    }
  }
  return names;
}

function readPreview(bytes) {
  let text = new TextDecoder('utf-8').decode(bytes);
  if (text.charCodeAt(0) === 0xfeff) text = text.slice(1);
  const records = splitRecords(text);
  const columns = nameColumns(records.length ? records[0].cells : []);
  return { columns, rowCount: Math.max(0, records.length - 1), preview: records.slice(1, 1 + PREVIEW_ROWS) };
}

/** Writes a column name as the term syntax needs it (quoted unless bare). */
function quoteName(name) {
  const bare = /^[\p{Alphabetic}_][\p{Alphabetic}\p{N}_.]*$/u.test(name) && !['log', 'sqrt', 'cat'].includes(name);
  return bare ? name : `"${name.replace(/"/g, '""')}"`;
}

// ---------------------------------------------------------------- loading

async function loadBytes(name, bytes) {
  clearMessage(el.dataMessage);
  let check;
  try {
    check = await engine.checkFile(bytes);
  } catch (e) {
    showMessage(el.dataMessage, `Could not check "${name}": ${e.message}`);
    return false;
  }
  if (check.error) {
    const kept = state.data ? ` The data already open ("${state.data.name}") are still loaded.` : '';
    const why = check.error.replace(/^Could not read the file:\s*/, '');
    showMessage(el.dataMessage, `"${name}" could not be opened: ${why}${kept}`);
    return false;
  }
  const p = readPreview(bytes);
  // The preview reads plain comma-separated text; the wasm reader also
  // finds other delimiters and title rows. Ask it whether the first and last
  // names are its own, and say so when they are not.
  let doubt = false;
  try {
    const probe = [...new Set([p.columns[0], p.columns[p.columns.length - 1]])].filter(Boolean);
    for (const c of probe) if (!(await engine.hasColumn(bytes, quoteName(c)))) doubt = true;
  } catch (_) {
    doubt = false; // the engine has said what went wrong
  }
  state.data = { name, bytes, ...p, doubt };
  // A fit still running was for the data before; its answer is dropped.
  if (el.fitButton.disabled) {
    state.fitSeq += 1;
    finishBusy('');
  }
  renderData();
  clearResult();
  clearMessage(el.modelMessage);
  return true;
}

const WORKBOOK = /\.(xlsx|xlsm|xlsb|xls|ods)$/i;

async function loadFile(file) {
  if (!file) return;
  if (WORKBOOK.test(file.name)) {
    const kept = state.data ? ` The data already open ("${state.data.name}") are still loaded.` : '';
    showMessage(el.dataMessage, `"${file.name}" is a workbook; this version reads comma-separated text (CSV) only. Save the sheet as CSV and open that.${kept}`);
    return;
  }
  let buf;
  try {
    buf = await file.arrayBuffer();
  } catch (e) {
    showMessage(el.dataMessage, `"${file.name}" could not be read from the disk: ${e.message}`);
    return;
  }
  await loadBytes(file.name, new Uint8Array(buf));
}

async function openDemo() {
  const node = $('plumbline-demo');
  const bytes = new TextEncoder().encode(node.textContent.replace(/^\n/, ''));
  const ok = await loadBytes(`${node.dataset.name} (invented demo data)`, bytes);
  if (!ok) return;
  el.responseColumn.value = DEMO.response;
  el.responseTransform.value = DEMO.transform;
  el.terms.value = DEMO.terms;
  el.intercept.checked = true;
  el.hc3.checked = false;
  el.level.value = '95';
  updateResponsePreview();
  await runFit();
}

function renderData() {
  const d = state.data;
  el.dataSummary.hidden = false;
  el.dataFacts.textContent = '';
  const strong = document.createElement('strong');
  strong.textContent = d.name;
  el.dataFacts.append(strong, `: ${plural(d.rowCount, 'row')} of data, ${plural(d.columns.length, 'column')}.`);

  el.previewDoubt.hidden = !d.doubt;

  const shown = d.preview.length;
  el.previewCaption.textContent = shown < d.rowCount ? `The first ${shown} of ${d.rowCount} rows` : `All ${d.rowCount} rows`;
  const thead = el.preview.tHead;
  const tbody = el.preview.tBodies[0];
  thead.textContent = '';
  tbody.textContent = '';
  const hr = thead.insertRow();
  addCell(hr, 'th', 'File row', { scope: 'col', className: 'rownum', title: 'The row of the file, counting the header as row 1, as messages and results count them' });
  for (const c of d.columns) addCell(hr, 'th', c, { scope: 'col' });
  d.preview.forEach(({ line, cells }) => {
    const tr = tbody.insertRow();
    addCell(tr, 'th', String(line), { scope: 'row', className: 'rownum' });
    for (const c of cells) {
      const td = addCell(tr, 'td', c);
      if (c.trim() === '') { td.className = 'blank'; td.title = 'empty cell'; }
    }
  });

  // The response choices: keep the one chosen if the new table has it.
  const previous = el.responseColumn.value;
  el.responseColumn.textContent = '';
  const none = new Option('Choose a column', '');
  el.responseColumn.add(none);
  for (const c of d.columns) el.responseColumn.add(new Option(c, c));
  el.responseColumn.value = d.columns.includes(previous) ? previous : '';

  el.columnButtons.textContent = '';
  for (const c of d.columns) {
    const b = document.createElement('button');
    b.type = 'button';
    b.className = 'chip';
    b.textContent = c;
    b.title = `Add ${quoteName(c)} to the terms`;
    b.addEventListener('click', () => insertTerm(quoteName(c)));
    el.columnButtons.append(b);
  }
  el.columnsInsert.hidden = d.columns.length === 0;
  updateResponsePreview();
}

function insertTerm(text) {
  const current = el.terms.value.replace(/[\s,]+$/, '');
  el.terms.value = current ? `${current}, ${text}` : text;
  el.terms.focus();
  markStale();
}

function responseTerm() {
  const col = el.responseColumn.value;
  if (!col) return '';
  const t = el.responseTransform.value;
  return t ? `${t}(${quoteName(col)})` : quoteName(col);
}

function updateResponsePreview() {
  const r = responseTerm();
  el.responsePreview.textContent = r ? `The model explains ${r}.` : '';
}

// ---------------------------------------------------------------- fitting

function buildRequest() {
  const response = responseTerm();
  if (!response) return { problem: 'Choose the column to explain (the response) first.' };
  const pct = Number(el.level.value.trim().replace(',', '.'));
  if (!(pct > 0 && pct < 100) || el.level.value.trim() === '') {
    return { problem: `The confidence level must be a percentage between 0 and 100, such as 95, not "${el.level.value}".` };
  }
  // The nearest double to the decimal typed: 95 gives exactly 0.95.
  const level = Number((pct / 100).toPrecision(15));
  return {
    request: {
      response,
      terms: el.terms.value,
      intercept: el.intercept.checked,
      level,
      hc3: el.hc3.checked,
    },
  };
}

async function runFit() {
  if (!state.data) {
    showMessage(el.modelMessage, 'Open a CSV file or the demo data first.');
    return;
  }
  const { request, problem } = buildRequest();
  if (problem) {
    showMessage(el.modelMessage, problem);
    return;
  }
  const seq = ++state.fitSeq;
  clearMessage(el.modelMessage);
  clearMessage(el.dataMessage);
  el.fitButton.disabled = true;
  el.form.setAttribute('aria-busy', 'true');
  el.fitStatus.textContent = 'Fitting…';
  let answer;
  try {
    answer = await engine.fit(state.data.bytes, request);
  } catch (e) {
    if (seq !== state.fitSeq) return;
    finishBusy('');
    clearResult();
    // The engine has said what happened (onTrouble) unless it is another error.
    if (!(e instanceof EngineError)) showMessage(el.modelMessage, `The fit could not be run: ${e.message}`);
    return;
  }
  if (seq !== state.fitSeq) return;
  if (answer.error) {
    finishBusy('');
    clearResult();
    showMessage(el.modelMessage, `The model could not be fitted. ${answer.error}`);
    return;
  }
  clearMessage(el.modelMessage);
  renderResult(answer.ok);
  revealResult();
  finishBusy(`Fitted: ${plural(answer.ok.coefficients.length, 'coefficient')}, ${answer.ok.n} rows used.`);
}

/** Brings the result into view when its top is below the window. */
function revealResult() {
  const top = el.result.getBoundingClientRect().top;
  if (top > window.innerHeight * 0.6) el.result.scrollIntoView({ block: 'start' });
}

function finishBusy(status) {
  state.fitsDone += 1;
  el.fitButton.disabled = false;
  el.form.removeAttribute('aria-busy');
  el.fitStatus.textContent = status;
}

function clearResult() {
  state.report = null;
  el.result.hidden = true;
  el.staleNote.hidden = true;
}

function markStale() {
  if (state.report) el.staleNote.hidden = false;
}

// ------------------------------------------------------------ number text

/** A JSON number of the result: a number, "Infinity", "-Infinity" or null. */
function full(v) {
  if (v === null || v === undefined) return '';
  return String(v);
}

function shortNumber(v, sig = 5) {
  if (v === null || v === undefined) return '—';
  if (v === 'Infinity') return '∞';
  if (v === '-Infinity') return '-∞';
  if (typeof v !== 'number') return String(v);
  if (v === 0) return '0';
  const a = Math.abs(v);
  if (a >= 1e-4 && a < 10 ** sig) return v.toPrecision(sig);
  if (a >= 10 ** sig && a < 1e9) return String(Math.round(v));
  return v.toExponential(sig - 1);
}

function pValueText(v) {
  return shortNumber(v, 4);
}

function percent(level) {
  return `${Number((level * 100).toPrecision(10))}%`;
}

function plural(k, word) {
  return `${k} ${k === 1 ? word : `${word}s`}`;
}

// ---------------------------------------------------------------- result

function addCell(tr, tag, text, props = {}) {
  const c = document.createElement(tag);
  c.textContent = text;
  Object.assign(c, props);
  tr.append(c);
  return c;
}

function numberCell(tr, v, sig, label) {
  const td = document.createElement('td');
  td.className = 'num';
  const shown = sig === 'p' ? pValueText(v) : shortNumber(v, sig);
  td.textContent = shown;
  const f = full(v);
  td.dataset.full = f;
  td.title = v === null || v === undefined ? `${label}: not defined` : `${label}: ${f}`;
  tr.append(td);
  return td;
}

function tableHead(table, labels) {
  const thead = table.tHead;
  thead.textContent = '';
  const tr = thead.insertRow();
  labels.forEach((label, j) => addCell(tr, 'th', label, { scope: 'col', className: j === 0 ? '' : 'num' }));
  table.tBodies[0].textContent = '';
  return table.tBodies[0];
}

const COEF_COLUMNS = [
  ['estimate', 'Estimate', 6],
  ['std_error', 'Standard error', 5],
  ['t', 't', 4],
  ['p_value', 'p-value', 'p'],
];

function renderResult(r) {
  state.report = r;
  el.result.hidden = false;
  el.staleNote.hidden = true;

  const lvl = percent(r.level);
  el.modelLine.textContent = '';
  const m = document.createElement('strong');
  m.textContent = r.response;
  el.modelLine.append(
    'Model of ', m,
    r.terms.length ? ` on ${r.terms.join(', ')}` : ' on no terms',
    r.intercept ? ', with an intercept.' : ', without an intercept.',
    r.weights ? ` Weighted by ${r.weights}.` : '',
  );

  el.rowsLine.textContent = '';
  const used = document.createElement('strong');
  used.textContent = `${r.n} of ${r.n + r.n_dropped} rows used.`;
  el.rowsLine.append(used);
  if (r.n_dropped > 0) {
    const parts = r.dropped.map((d) => {
      const more = d.count > d.first_rows.length ? ', …' : '';
      const where = d.first_rows.length ? ` (file ${d.first_rows.length === 1 ? 'row' : 'rows'} ${d.first_rows.join(', ')}${more})` : '';
      return `${plural(d.count, 'row')} with ${d.reason.replace(/^missing value in /, 'a missing value in ')}${where}`;
    });
    el.rowsLine.append(` Left out: ${parts.join('; ')}.`);
  }

  const lowLabel = `Low (${lvl})`;
  const highLabel = `High (${lvl})`;
  const body = tableHead(el.coefTable, ['Term', ...COEF_COLUMNS.map((c) => c[1]), lowLabel, highLabel]);
  for (const c of r.coefficients) {
    const tr = body.insertRow();
    const th = addCell(tr, 'th', c.term, { scope: 'row' });
    if (c.group && c.group !== c.term) th.title = `from ${c.group}`;
    if (c.aliased) {
      const td = addCell(tr, 'td', 'not estimated: this column is a combination of earlier ones (aliased)', { className: 'aliased' });
      td.colSpan = 6;
      continue;
    }
    for (const [key, label, sig] of COEF_COLUMNS) numberCell(tr, c[key], sig, label);
    numberCell(tr, c.ci_low, 6, lowLabel);
    numberCell(tr, c.ci_high, 6, highLabel);
  }

  if (r.hc3) {
    el.hc3Block.hidden = false;
    const hb = tableHead(el.hc3Table, ['Term', 'Standard error (HC3)', 't', 'p-value', lowLabel, highLabel]);
    for (const c of r.hc3) {
      const tr = hb.insertRow();
      addCell(tr, 'th', c.term, { scope: 'row' });
      numberCell(tr, c.std_error, 5, 'Standard error (HC3)');
      numberCell(tr, c.t, 4, 't');
      numberCell(tr, c.p_value, 'p', 'p-value');
      numberCell(tr, c.ci_low, 6, lowLabel);
      numberCell(tr, c.ci_high, 6, highLabel);
    }
  } else {
    el.hc3Block.hidden = true;
  }

  el.warningsList.textContent = '';
  for (const w of r.warnings) addItem(el.warningsList, w);
  el.warningsBlock.hidden = r.warnings.length === 0;

  el.cautionsList.textContent = '';
  for (const c of r.cautions) addItem(el.cautionsList, c);

  renderFigures(r);
  el.copyStatus.textContent = '';
}

function addItem(list, text) {
  const li = document.createElement('li');
  li.textContent = text;
  list.append(li);
}

function figure(dl, term, value, { full: fullValue, note } = {}) {
  const dt = document.createElement('dt');
  dt.textContent = term;
  const dd = document.createElement('dd');
  if (value instanceof Node) dd.append(value);
  else dd.textContent = value;
  if (fullValue !== undefined) {
    dd.dataset.full = fullValue;
    dd.title = `${term}: ${fullValue === '' ? 'not defined' : fullValue}`;
  }
  if (note) {
    const s = document.createElement('span');
    s.className = 'note';
    s.textContent = ` ${note}`;
    dd.append(s);
  }
  dl.append(dt, dd);
}

function numFigure(dl, term, v, sig, note) {
  figure(dl, term, shortNumber(v, sig), { full: full(v), note });
}

const SOLVER_WORDS = {
  double: 'double precision, refined with residuals summed in double-double',
  'double-double': 'double-double, about 32 digits, because double precision alone could not promise enough digits',
};

function renderFigures(r) {
  const dl = el.fitFigures;
  dl.textContent = '';
  figure(dl, 'Rows used', `${r.n} of ${r.n + r.n_dropped}`);
  numFigure(dl, 'R²', r.r_squared, 5, r.r_squared_kind === 'uncentred' ? '(about zero, as there is no intercept)' : '');
  numFigure(dl, 'Adjusted R²', r.adj_r_squared, 5);
  numFigure(dl, 'Residual standard error', r.residual_std_error, 5, `on ${r.df_residual} degrees of freedom`);
  numFigure(dl, 'F statistic', r.f_statistic, 5, `on ${r.df_model} and ${r.df_residual} degrees of freedom`);
  figure(dl, 'p-value of F', pValueText(r.f_p_value), { full: full(r.f_p_value) });
  numFigure(dl, 'Log-likelihood', r.log_likelihood, 6);
  numFigure(dl, 'AIC', r.aic, 6);
  numFigure(dl, 'BIC', r.bic, 6);

  const cf = el.computeFigures;
  cf.textContent = '';
  figure(cf, 'Arithmetic', SOLVER_WORDS[r.solver_path] || r.solver_path);
  numFigure(cf, 'Condition number', r.condition_number, 4, '(of the design with scaled columns)');
  numFigure(cf, 'Digits double precision could promise', r.double_precision_digits, 3);
  figure(cf, 'Columns estimated', `${r.rank} of ${r.n_columns}`);
  if (r.aliased.length) figure(cf, 'Not estimated (aliased)', r.aliased.join(', '));
}

// ------------------------------------------------------------------ copy

function tableAsText(r) {
  const head = ['term', 'estimate', 'standard error', 't', 'p-value', `low (${percent(r.level)})`, `high (${percent(r.level)})`];
  const lines = [head.join('\t')];
  for (const c of r.coefficients) {
    const cells = [c.term, c.estimate, c.std_error, c.t, c.p_value, c.ci_low, c.ci_high].map((v, j) => (j === 0 ? v : full(v)));
    lines.push(cells.map((s) => String(s).replace(/[\t\r\n]+/g, ' ')).join('\t'));
  }
  return `${lines.join('\n')}\n`;
}

async function copyTable() {
  if (!state.report) return;
  const text = tableAsText(state.report);
  let done = false;
  try {
    if (navigator.clipboard && navigator.clipboard.writeText) {
      await navigator.clipboard.writeText(text);
      done = true;
    }
  } catch (_) {
    done = false;
  }
  if (!done) {
    const ta = document.createElement('textarea');
    ta.value = text;
    ta.setAttribute('readonly', '');
    ta.className = 'offscreen';
    document.body.append(ta);
    ta.select();
    try { done = document.execCommand('copy'); } catch (_) { done = false; }
    ta.remove();
    el.copyButton.focus();
  }
  el.copyStatus.textContent = done
    ? `Copied ${plural(state.report.coefficients.length, 'row')}, tab-separated, with every digit.`
    : 'The browser did not allow copying.';
}

// ---------------------------------------------------------------- wiring

el.fileInput.addEventListener('change', () => {
  const f = el.fileInput.files && el.fileInput.files[0];
  loadFile(f).finally(() => { el.fileInput.value = ''; });
});
el.demoButton.addEventListener('click', () => { openDemo(); });
el.form.addEventListener('submit', (e) => {
  e.preventDefault();
  runFit();
});
el.copyButton.addEventListener('click', () => { copyTable(); });
el.terms.addEventListener('keydown', (e) => {
  if (e.key === 'Enter' && !e.shiftKey && !e.isComposing) {
    e.preventDefault();
    el.form.requestSubmit();
  }
});
for (const c of [el.responseColumn, el.responseTransform]) {
  c.addEventListener('change', () => { updateResponsePreview(); markStale(); });
}
for (const c of [el.terms, el.intercept, el.level, el.hc3]) {
  c.addEventListener('input', markStale);
  c.addEventListener('change', markStale);
}

// Drop a file anywhere on the page.
let dragDepth = 0;
window.addEventListener('dragenter', (e) => {
  e.preventDefault();
  dragDepth++;
  document.body.classList.add('dragging');
});
window.addEventListener('dragleave', () => {
  dragDepth = Math.max(0, dragDepth - 1);
  if (dragDepth === 0) document.body.classList.remove('dragging');
});
window.addEventListener('dragover', (e) => {
  e.preventDefault();
  if (e.dataTransfer) e.dataTransfer.dropEffect = 'copy';
});
window.addEventListener('drop', (e) => {
  e.preventDefault();
  dragDepth = 0;
  document.body.classList.remove('dragging');
  const f = e.dataTransfer && e.dataTransfer.files && e.dataTransfer.files[0];
  if (f) loadFile(f);
});

/** The test hook: the same path to the worker as the Fit button. */
window.plumblineTest = {
  fit(csvText, request) {
    return engine.fit(new TextEncoder().encode(csvText), request);
  },
  /** As fit, for raw bytes (a file that is not text, say). */
  fitBytes(bytes, request) {
    return engine.fit(bytes, request);
  },
  crashWorker() {
    engine.crashForTest();
  },
  /** Resolves with the error the page got when the worker answered as a panic does. */
  pretendPanic() {
    return engine.pretendPanicForTest().then(() => null, (e) => ({ name: e.name, kind: e.kind, message: e.message }));
  },
  /** How many fits started from the page have been answered. */
  fitsDone() {
    return state.fitsDone;
  },
  copiedText() {
    return state.report ? tableAsText(state.report) : null;
  },
};

if (location.hash === '#demo') openDemo();
