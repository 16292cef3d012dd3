// UI wiring: loading a table, looking at its columns, choosing a model,
// showing the result. No statistics here: the table, its column profile and
// every number shown come from the wasm (`inspect` and `fit_bytes`).
// Text from the file or the result goes into the page with textContent only.
import { Engine, EngineError, base64ToBytes } from './engine.js';

const PREVIEW_ROWS = 10;
const UNDO_DEPTH = 30;
const DEMO = { response: 'energy_mwh', transform: 'log' };

const $ = (id) => document.getElementById(id);
const el = {
  fileInput: $('file-input'),
  demoButton: $('demo-button'),
  pasteText: $('paste-text'),
  pasteButton: $('paste-button'),
  dataMessage: $('data-message'),
  dataSummary: $('data-summary'),
  dataFacts: $('data-facts'),
  readLine: $('read-line'),
  sheetField: $('sheet-field'),
  sheetSelect: $('sheet-select'),
  headerRow: $('header-row'),
  readWarningsBlock: $('read-warnings-block'),
  readWarnings: $('read-warnings'),
  preview: $('preview'),
  previewCaption: $('preview-caption'),
  columnsEmpty: $('columns-empty'),
  columnsBody: $('columns-body'),
  columnsTable: $('columns-table'),
  suggestedButton: $('suggested-button'),
  undoButton: $('undo-button'),
  columnsStatus: $('columns-status'),
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
  // {name, bytes, read: {paste?, sheet?, header_row?}, kinds: {column: kind},
  //  detected: {column: kind}, inspection: {load, columns, preview}}
  data: null,
  report: null,
  fitSeq: 0,
  fitsDone: 0, // fits answered, good or bad (for the tests)
  inspectSeq: 0,
  inspectsDone: 0, // inspections answered, good or bad (for the tests)
  undo: [], // earlier texts of the terms, the last on top
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

/** Writes a column name as the term syntax needs it (quoted unless bare). */
function quoteName(name) {
  const bare = /^[\p{Alphabetic}_][\p{Alphabetic}\p{N}_.]*$/u.test(name)
    && !['log', 'sqrt', 'cat', 'boxcox', 'yeojohnson'].includes(name);
  return bare ? name : `"${name.replace(/"/g, '""')}"`;
}

// ---------------------------------------------------------------- reading

/** The reading options of the data, as inspect and fit requests take them. */
function readRequest(d) {
  const r = {};
  if (d.read.paste) r.paste = true;
  if (d.read.sheet !== undefined) r.sheet = d.read.sheet;
  if (d.read.header_row !== undefined) r.header_row = d.read.header_row;
  return r;
}

/** Asks the wasm to read and profile the bytes. Resolves with its answer or
 *  rejects with an EngineError (which the engine has already reported). */
async function inspectBytes(bytes, read, kinds) {
  const request = { ...read, preview_rows: PREVIEW_ROWS };
  if (kinds && Object.keys(kinds).length) request.kinds = kinds;
  try {
    return await engine.inspect(bytes, request);
  } finally {
    state.inspectsDone += 1;
  }
}

function keptNote() {
  return state.data ? ` The data already open ("${state.data.name}") are still loaded.` : '';
}

function readError(text) {
  return text.replace(/^Could not read the file:\s*/, '');
}

/** Stops waiting for a fit of the data before (its answer is dropped). */
function dropRunningFit() {
  if (el.fitButton.disabled) {
    state.fitSeq += 1;
    finishBusy('');
  }
}

async function loadBytes(name, bytes, { paste = false } = {}) {
  clearMessage(el.dataMessage);
  const read = paste ? { paste: true } : {};
  const seq = ++state.inspectSeq;
  let answer;
  try {
    answer = await inspectBytes(bytes, read, null);
  } catch (e) {
    if (seq === state.inspectSeq) showMessage(el.dataMessage, `"${name}" could not be opened: ${e.message}${keptNote()}`);
    return false;
  }
  if (seq !== state.inspectSeq) return false;
  if (answer.error) {
    showMessage(el.dataMessage, `"${name}" could not be opened: ${readError(answer.error)}${keptNote()}`);
    return false;
  }
  const inspection = answer.ok;
  state.data = { name, bytes, read, kinds: {}, detected: detectedKinds(inspection), inspection };
  state.undo = [];
  dropRunningFit();
  renderData();
  renderColumns();
  setColumnsStatus('');
  clearResult();
  clearMessage(el.modelMessage);
  return true;
}

function detectedKinds(inspection) {
  return Object.fromEntries(inspection.columns.map((c) => [c.name, c.kind]));
}

/**
 * Reads the data again with other reading options or kinds. On an error the
 * data stay as they were and the wasm's words are shown.
 * @param {object} change  {read?: the new reading options, kinds?: the new kinds}
 */
async function reinspect(change, focusAfter) {
  const d = state.data;
  if (!d) return false;
  const read = change.read || d.read;
  const kinds = change.kinds || (change.read ? {} : d.kinds);
  const seq = ++state.inspectSeq;
  clearMessage(el.dataMessage);
  let answer;
  try {
    answer = await inspectBytes(d.bytes, readRequest({ read }), kinds);
  } catch (e) {
    if (seq === state.inspectSeq) {
      showMessage(el.dataMessage, `"${d.name}" could not be read again: ${e.message} The data stay as they were read before.`);
      renderReadControls();
    }
    return false;
  }
  if (seq !== state.inspectSeq || state.data !== d) return false;
  if (answer.error) {
    showMessage(el.dataMessage, `${readError(answer.error)} The data stay as they were read before.`);
    renderReadControls();
    renderColumns();
    return false;
  }
  d.read = read;
  d.kinds = kinds;
  d.inspection = answer.ok;
  if (change.read) {
    // Another sheet or header row: other columns, so the kinds found are new.
    d.detected = detectedKinds(answer.ok);
    dropRunningFit();
    clearResult();
    renderData();
  }
  renderColumns();
  if (focusAfter) focusAfter();
  return true;
}

async function loadFile(file) {
  if (!file) return;
  let buf;
  try {
    buf = await file.arrayBuffer();
  } catch (e) {
    showMessage(el.dataMessage, `"${file.name}" could not be read from the disk: ${e.message}`);
    return;
  }
  await loadBytes(file.name, new Uint8Array(buf));
}

async function loadPaste() {
  const text = el.pasteText.value;
  if (text.trim() === '') {
    showMessage(el.dataMessage, `There are no pasted cells to use: copy a block of cells in a spreadsheet, header row included, and paste it into the box first.${keptNote()}`);
    el.pasteText.focus();
    return;
  }
  await loadBytes('Pasted cells', new TextEncoder().encode(text), { paste: true });
}

async function openDemo() {
  const node = $('plumbline-demo');
  const bytes = new TextEncoder().encode(node.textContent.replace(/^\n/, ''));
  const ok = await loadBytes(`${node.dataset.name} (invented demo data)`, bytes);
  if (!ok) return;
  el.responseColumn.value = DEMO.response;
  el.responseTransform.value = DEMO.transform;
  el.terms.value = suggestedTerms(state.data.inspection.columns, DEMO.response).join(', ');
  el.intercept.checked = true;
  el.hc3.checked = false;
  el.level.value = '95';
  updateResponsePreview();
  renderColumns();
  await runFit();
}

// ------------------------------------------------------ what the data are

const DELIMITER_WORDS = { ',': 'comma', ';': 'semicolon', tab: 'tab', '|': 'bar', ' ': 'space', ':': 'colon' };

/** How the data were read, in one short line, from the load summary. */
function readSummary(load) {
  const rowWord = load.format === 'workbook' ? 'row' : 'line';
  let skipped = '';
  const others = [];
  for (const note of load.notes) {
    // The readers' note on title rows: "...; 2 rows above it (a title or notes) were skipped."
    const m = /;\s*(\d+)\s+(rows?|lines?)\s+above it\b/.exec(note);
    if (m) skipped = `${m[1]} ${m[2]} above it skipped`;
    else others.push(note);
  }
  const parts = [];
  if (load.format === 'workbook') {
    parts.push(load.sheet !== null ? `Sheet ${load.sheet}` : 'Workbook');
  } else {
    parts.push(load.format === 'paste' ? 'Pasted cells' : 'Text');
    if (load.delimiter) {
      const w = DELIMITER_WORDS[load.delimiter];
      parts.push(w ? `${w}-separated` : `separated by "${load.delimiter}"`);
    }
    parts.push(`decimal ${load.decimal}`);
    if (load.encoding && load.format !== 'paste') parts.push(load.encoding);
  }
  let line = parts.join(', ');
  if (load.format === 'workbook' || load.header_row !== 1 || skipped) {
    line += `${load.format === 'workbook' ? ',' : ';'} header on ${rowWord} ${load.header_row}`;
    if (skipped) line += `; ${skipped}`;
  }
  return { line: `${line}.`, others };
}

function renderReadControls() {
  const load = state.data.inspection.load;
  const many = load.sheets.length > 1;
  el.sheetField.hidden = !many;
  el.sheetSelect.textContent = '';
  if (many) {
    for (const s of load.sheets) el.sheetSelect.add(new Option(s, s));
    el.sheetSelect.value = load.sheet;
  }
  el.headerRow.value = String(load.header_row);
}

function renderData() {
  const d = state.data;
  const { load, preview } = d.inspection;
  el.dataSummary.hidden = false;
  el.dataFacts.textContent = '';
  const strong = document.createElement('strong');
  strong.textContent = d.name;
  el.dataFacts.append(strong, `: ${plural(load.rows, 'row')} of data, ${plural(load.columns, 'column')}.`);

  const { line, others } = readSummary(load);
  el.readLine.textContent = '';
  const label = document.createElement('span');
  label.className = 'read-label';
  label.textContent = 'Read as:';
  el.readLine.append(label, ` ${[line, ...others].join(' ')}`);
  renderReadControls();

  el.readWarnings.textContent = '';
  for (const w of load.warnings) addItem(el.readWarnings, w);
  el.readWarningsBlock.hidden = load.warnings.length === 0;

  const shown = preview.rows.length;
  el.previewCaption.textContent = shown < load.rows ? `The first ${shown} of ${load.rows} rows` : `All ${load.rows} rows`;
  const thead = el.preview.tHead;
  const tbody = el.preview.tBodies[0];
  thead.textContent = '';
  tbody.textContent = '';
  const hr = thead.insertRow();
  const where = {
    workbook: ['Sheet row', 'The row of the sheet, as messages and results count them'],
    paste: ['Pasted row', 'The line of the pasted cells, counting the header as 1, as messages and results count them'],
  }[load.format] || ['File row', 'The line of the file where the row starts, as messages and results count them'];
  addCell(hr, 'th', where[0], { scope: 'col', className: 'rownum', title: where[1] });
  for (const c of preview.header) addCell(hr, 'th', c, { scope: 'col', title: c });
  preview.rows.forEach((cells, i) => {
    const tr = tbody.insertRow();
    addCell(tr, 'th', String(preview.source_rows[i]), { scope: 'row', className: 'rownum' });
    for (const c of cells) {
      const td = addCell(tr, 'td', c === null ? '' : c);
      if (c === null || c.trim() === '') { td.className = 'blank'; td.title = 'empty cell'; }
    }
  });

  // The response choices: keep the one chosen if the new table has it.
  const names = preview.header;
  const previous = el.responseColumn.value;
  el.responseColumn.textContent = '';
  el.responseColumn.add(new Option('Choose a column', ''));
  for (const c of names) el.responseColumn.add(new Option(c, c));
  el.responseColumn.value = names.includes(previous) ? previous : '';

  el.columnButtons.textContent = '';
  for (const c of names) {
    const b = document.createElement('button');
    b.type = 'button';
    b.className = 'chip';
    b.textContent = c;
    b.title = `Add ${quoteName(c)} to the terms`;
    b.addEventListener('click', () => insertTerm(quoteName(c)));
    el.columnButtons.append(b);
  }
  el.columnsInsert.hidden = names.length === 0;
  updateResponsePreview();
}

// ------------------------------------------------------------ the columns

const KIND_WORDS = {
  numeric: 'numeric',
  coded_category: 'coded category',
  text_category: 'text category',
  binary: 'binary',
  identifier: 'identifier',
  date: 'date',
  constant: 'constant',
  empty: 'empty',
};
const KIND_CHOICES = ['numeric', 'coded_category', 'text_category', 'binary', 'identifier'];
const LEFT_OUT = {
  identifier: 'left out: labels rows',
  constant: 'left out: the same in every row',
  empty: 'left out: no values',
  date: 'left out: a date',
};

/** A column holds text when the wasm gave it no numeric summary. */
function holdsText(col) {
  return col.summary.mean === null || col.summary.mean === undefined;
}

/** The term the profile suggests for a column, or null when it suggests leaving it out. */
function suggestedTerm(col) {
  if (!col.offer_as_predictor) return null;
  const q = quoteName(col.name);
  if (col.kind === 'coded_category' || col.kind === 'text_category') return `cat(${q})`;
  if (col.kind === 'binary') return holdsText(col) ? `cat(${q})` : q;
  if (col.kind === 'numeric' && col.suggested_transform) return col.suggested_transform.term;
  return q;
}

/** The terms the profile suggests, leaving out the response column. */
function suggestedTerms(columns, response) {
  return columns.filter((c) => c.name !== response).map(suggestedTerm).filter((t) => t !== null);
}

/** The terms typed, split at the commas between them (not those in quotes or brackets). */
function splitTerms(text) {
  const out = [];
  let depth = 0;
  let quoted = false;
  let cur = '';
  for (const ch of text) {
    if (ch === '"') quoted = !quoted;
    else if (!quoted && ch === '(') depth++;
    else if (!quoted && ch === ')') depth = Math.max(0, depth - 1);
    if (ch === ',' && !quoted && depth === 0) {
      out.push(cur.trim());
      cur = '';
    } else cur += ch;
  }
  out.push(cur.trim());
  return out.filter((t) => t !== '');
}

function setColumnsStatus(text) {
  el.columnsStatus.textContent = text;
}

/** Changes the terms from the Columns panel, keeping the text before for Undo. */
function changeTerms(text, status) {
  state.undo.push(el.terms.value);
  if (state.undo.length > UNDO_DEPTH) state.undo.shift();
  el.terms.value = text;
  el.undoButton.disabled = false;
  setColumnsStatus(status);
  markStale();
}

function addTerm(term) {
  const current = splitTerms(el.terms.value);
  if (current.includes(term)) {
    setColumnsStatus(`${term} is already in the terms.`);
    return;
  }
  changeTerms([...current, term].join(', '), `Added ${term} to the terms.`);
}

function undoTerms() {
  if (!state.undo.length) return;
  el.terms.value = state.undo.pop();
  el.undoButton.disabled = state.undo.length === 0;
  setColumnsStatus(el.terms.value ? `Undone: the terms are back to ${el.terms.value}.` : 'Undone: the terms are empty again.');
  markStale();
}

function useSuggested() {
  if (!state.data) return;
  const terms = suggestedTerms(state.data.inspection.columns, el.responseColumn.value);
  const text = terms.join(', ');
  if (text === el.terms.value) {
    setColumnsStatus('The terms are already the suggested ones.');
    return;
  }
  changeTerms(text, terms.length ? `The terms are now the suggested ones: ${text}.` : 'No column is suggested as a term, so the terms are now empty.');
}

function changeKind(name, kind) {
  const d = state.data;
  const kinds = { ...d.kinds };
  if (d.detected[name] === kind) delete kinds[name];
  else kinds[name] = kind;
  setColumnsStatus('');
  reinspect({ kinds }, () => {
    const sel = [...el.columnsTable.querySelectorAll('select')].find((s) => s.dataset.column === name);
    if (sel) sel.focus();
  });
}

function actionButton(text, term, className) {
  const b = document.createElement('button');
  b.type = 'button';
  b.className = className;
  b.textContent = text;
  b.dataset.term = term;
  b.setAttribute('aria-label', text === 'Add' ? `Add ${term}` : `${text}: ${term}`);
  b.title = `Add ${term} to the terms`;
  b.addEventListener('click', () => addTerm(term));
  return b;
}

function renderColumns() {
  const d = state.data;
  el.columnsEmpty.hidden = !!d;
  el.columnsBody.hidden = !d;
  el.undoButton.disabled = state.undo.length === 0;
  const body = el.columnsTable.tBodies[0];
  body.textContent = '';
  if (!d) return;
  for (const col of d.inspection.columns) {
    const tr = body.insertRow();
    tr.dataset.column = col.name;
    const th = addCell(tr, 'th', col.name, { scope: 'row', className: 'col-name' });
    if (col.examples.length) th.title = `Values: ${col.examples.join(', ')}${col.distinct > col.examples.length ? ', …' : ''}`;

    const kindCell = tr.insertCell();
    kindCell.className = 'kind';
    const sel = document.createElement('select');
    sel.dataset.column = col.name;
    sel.setAttribute('aria-label', `Kind of ${col.name}`);
    const choices = KIND_CHOICES.includes(col.kind) ? KIND_CHOICES : [col.kind, ...KIND_CHOICES];
    for (const k of choices) sel.add(new Option(KIND_WORDS[k] || k, k));
    sel.value = col.kind;
    sel.addEventListener('change', () => changeKind(col.name, sel.value));
    kindCell.append(sel);
    if (col.kind_set_by_user) {
      const mark = document.createElement('span');
      mark.className = 'by-you';
      mark.textContent = 'set by you';
      kindCell.append(' ', mark);
    }

    // Both kinds of cell are read as missing and counted in `missing`.
    const among = [];
    if (col.errors) among.push(`${col.errors} ${col.errors === 1 ? 'spreadsheet error' : 'spreadsheet errors'}`);
    if (col.invalid) among.push(`${col.invalid} not ${col.invalid === 1 ? 'a number' : 'numbers'}`);
    const missing = addCell(tr, 'td', among.length ? `${col.missing} (${among.join(', ')})` : String(col.missing), { className: 'num' });
    if (among.length) missing.title = `${plural(col.missing, 'cell')} read as missing, of them ${among.join(' and ')}`;
    addCell(tr, 'td', String(col.distinct), { className: 'num' });
    const sk = addCell(tr, 'td', col.skewness === null ? '' : shortNumber(col.skewness, 3), { className: 'num' });
    if (col.skewness !== null) {
      const se = col.summary.skewness_se;
      sk.title = `skewness ${full(col.skewness)}${se !== null && se !== undefined ? ` ± ${full(se)}` : ''}${col.skew ? ` (${col.skew === 'none' ? 'roughly symmetric' : col.skew})` : ''}`;
    }

    const term = suggestedTerm(col);
    const sugg = tr.insertCell();
    sugg.className = 'suggest';
    if (term !== null) {
      const code = document.createElement('code');
      code.textContent = term;
      sugg.append(code);
      const t = col.suggested_transform;
      if (t && t.lambda_ci) sugg.title = `λ ${full(t.lambda)}, 95% interval ${full(t.lambda_ci[0])} to ${full(t.lambda_ci[1])}`;
    }
    addCell(tr, 'td', col.reason, { className: 'reason' });

    const act = tr.insertCell();
    act.className = 'actions';
    if (term === null || col.name === el.responseColumn.value) {
      const note = document.createElement('span');
      note.className = 'left-out';
      note.textContent = term === null ? LEFT_OUT[col.kind] || 'left out' : 'the response';
      act.append(note);
    } else {
      act.append(actionButton('Add', term, 'add'));
      if (col.kind === 'numeric' && col.suggested_transform) act.append(' ', actionButton('Add as is', quoteName(col.name), 'add-plain'));
    }
  }
}

// ------------------------------------------------------------ the model

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
      ...readRequest(state.data),
    },
  };
}

async function runFit() {
  if (!state.data) {
    showMessage(el.modelMessage, 'Open a file, paste cells or open the demo data first.');
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
    const rowsWord = { workbook: 'sheet', paste: 'pasted' }[state.data && state.data.inspection.load.format] || 'file';
    const parts = r.dropped.map((d) => {
      const more = d.count > d.first_rows.length ? ', …' : '';
      const where = d.first_rows.length ? ` (${rowsWord} ${d.first_rows.length === 1 ? 'row' : 'rows'} ${d.first_rows.join(', ')}${more})` : '';
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
el.pasteButton.addEventListener('click', () => { loadPaste(); });
el.sheetSelect.addEventListener('change', () => {
  if (!state.data) return;
  // Another sheet: its header row is found again.
  reinspect({ read: { ...state.data.read, sheet: el.sheetSelect.value, header_row: undefined } });
});
el.headerRow.addEventListener('change', () => {
  if (!state.data) return;
  const text = el.headerRow.value.trim();
  const n = Number(text);
  if (!/^\d+$/.test(text) || n < 1) {
    showMessage(el.dataMessage, `The header row must be a whole number, 1 or more, not "${el.headerRow.value}". The data stay as they were read before.`);
    renderReadControls();
    return;
  }
  if (n === state.data.inspection.load.header_row) return;
  const read = { ...state.data.read, header_row: n };
  if (state.data.inspection.load.sheet !== null && read.sheet === undefined) read.sheet = state.data.inspection.load.sheet;
  reinspect({ read });
});
el.suggestedButton.addEventListener('click', useSuggested);
el.undoButton.addEventListener('click', undoTerms);
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
el.responseColumn.addEventListener('change', () => { if (state.data) renderColumns(); });
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
  /** The wasm's inspect, for bytes or text (text is sent as UTF-8). */
  inspect(bytesOrText, request = {}) {
    const bytes = typeof bytesOrText === 'string' ? new TextEncoder().encode(bytesOrText) : bytesOrText;
    return engine.inspect(bytes, request);
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
  /** How many inspections started from the page have been answered. */
  inspectsDone() {
    return state.inspectsDone;
  },
  copiedText() {
    return state.report ? tableAsText(state.report) : null;
  },
};

if (location.hash === '#demo') openDemo();
