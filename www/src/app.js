// UI wiring: loading a table, looking at its columns, choosing a model and
// its terms, showing the result and its checks. No statistics here: the
// table, its column profile and every number shown come from the wasm
// (`inspect`, `fit_bytes`, `select_bytes`, `check_bytes`), and the figures
// are drawn by it (`draw_figure`). Text from the file or the result goes
// into the page with textContent only.
import { Engine, EngineError, Painter, base64ToBytes } from './engine.js';

const PREVIEW_ROWS = 10;
const UNDO_DEPTH = 30;
const DEMO = { response: 'energy_mwh', transform: 'log' };
/** A fit of at most this many rows is checked at once; larger ones on request. */
const AUTO_CHECK_ROWS = 20000;
/** The most influential rows listed in the Checks. */
const INFLUENTIAL_ROWS = 10;

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
  chooseForm: $('choose-form'),
  candidates: $('candidates'),
  candidatesSuggested: $('candidates-suggested'),
  candidatesFromModel: $('candidates-from-model'),
  candidatesUndo: $('candidates-undo'),
  candidatesStatus: $('candidates-status'),
  force: $('force'),
  chooseBy: $('choose-by'),
  searchWay: $('search-way'),
  stability: $('stability'),
  resamples: $('resamples'),
  searchButton: $('search-button'),
  stopButton: $('stop-button'),
  searchStatus: $('search-status'),
  searchProgress: $('search-progress'),
  searchProgressBar: $('search-progress-bar'),
  chooseMessage: $('choose-message'),
  chooseResult: $('choose-result'),
  chooseStale: $('choose-stale'),
  recommendReason: $('recommend-reason'),
  recommendUse: $('recommend-use'),
  searchFacts: $('search-facts'),
  comparisonTable: $('comparison-table'),
  routeIntro: $('route-intro'),
  routeSteps: $('route-steps'),
  pathBlock: $('path-block'),
  pathSteps: $('path-steps'),
  pathBy: $('path-by'),
  stabilityBlock: $('stability-block'),
  stabilityIntro: $('stability-intro'),
  stabilityBars: $('stability-bars'),
  chooseNotesBlock: $('choose-notes-block'),
  chooseNotes: $('choose-notes'),
  chooseCautions: $('choose-cautions'),
  checks: $('checks'),
  checkButton: $('check-button'),
  checkStatus: $('check-status'),
  checksStale: $('checks-stale'),
  checksMessage: $('checks-message'),
  checksBody: $('checks-body'),
  findings: $('findings'),
  testsTable: $('tests-table'),
  checkFigures: $('check-figures'),
  vifTable: $('vif-table'),
  collinearityFigures: $('collinearity-figures'),
  influenceTable: $('influence-table'),
  influenceHint: $('influence-hint'),
  checksCautions: $('checks-cautions'),
  plots: $('plots'),
  excludedAreas: [$('excluded-model'), $('excluded-checks')],
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
  fitRequest: null, // the request of the fit shown in the Result
  candidateUndo: [], // earlier texts of the candidate terms
  candidatesEdited: false, // the user changed the candidates: keep them
  selection: null, // the SelectReport shown
  searchSeq: 0,
  searchesDone: 0, // searches answered, good, bad or stopped (for the tests)
  checkSeq: 0,
  checksDone: 0, // checks answered, good or bad (for the tests)
  figuresDrawn: 0, // check results whose figures have all been drawn (for the tests)
  plots: new Map(), // canvas id -> {figure, extent, area, order}
  excluded: [], // source row numbers the user left out of the model
  excludedUndo: [], // earlier lists of them, the last on top
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

const painter = new Painter(engine.wasm);

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
  state.candidateUndo = [];
  state.candidatesEdited = false;
  state.excluded = [];
  state.excludedUndo = [];
  renderExcluded();
  dropRunningFit();
  renderData();
  renderColumns();
  setColumnsStatus('');
  setCandidatesStatus('');
  clearResult();
  clearSelection();
  defaultCandidates();
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
    // Other rows, numbered anew: what was left out no longer applies.
    state.excluded = [];
    state.excludedUndo = [];
    renderExcluded();
    dropRunningFit();
    clearResult();
    clearSelection();
    renderData();
  }
  renderColumns();
  defaultCandidates();
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
  defaultCandidates();
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

function setCandidatesStatus(text) {
  el.candidatesStatus.textContent = text;
}

/**
 * A field of terms with its own Undo: the model's terms (changed from the
 * Columns panel and the comparison's "Use this model") and the candidates.
 */
const FIELDS = {
  model: {
    input: el.terms,
    stack: () => state.undo,
    undoButton: el.undoButton,
    say: setColumnsStatus,
    name: 'the terms',
    changed: () => { markStale(); markChooseStale(); },
  },
  candidates: {
    input: el.candidates,
    stack: () => state.candidateUndo,
    undoButton: el.candidatesUndo,
    say: setCandidatesStatus,
    name: 'the candidates',
    changed: () => { state.candidatesEdited = true; markChooseStale(); },
  },
};

/** Changes a field of terms, keeping the text before for its Undo. */
function changeField(f, text, status) {
  const stack = f.stack();
  stack.push(f.input.value);
  if (stack.length > UNDO_DEPTH) stack.shift();
  f.input.value = text;
  f.undoButton.disabled = false;
  f.say(status);
  f.changed();
}

function undoField(f) {
  const stack = f.stack();
  if (!stack.length) return;
  f.input.value = stack.pop();
  f.undoButton.disabled = stack.length === 0;
  f.say(f.input.value ? `Undone: ${f.name} are back to ${f.input.value}.` : `Undone: ${f.name} are empty again.`);
  f.changed();
}

/** Changes the terms from the Columns panel, keeping the text before for Undo. */
function changeTerms(text, status) {
  changeField(FIELDS.model, text, status);
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
  undoField(FIELDS.model);
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

/** The candidates start as the suggestions, until the user changes them. */
function defaultCandidates() {
  if (!state.data || state.candidatesEdited) return;
  el.candidates.value = suggestedTerms(state.data.inspection.columns, el.responseColumn.value).join(', ');
}

function useSuggestedCandidates() {
  if (!state.data) return;
  const text = suggestedTerms(state.data.inspection.columns, el.responseColumn.value).join(', ');
  if (text === el.candidates.value) {
    setCandidatesStatus('The candidates are already the suggested terms.');
    return;
  }
  changeField(FIELDS.candidates, text, text ? `The candidates are now the suggested terms: ${text}.` : 'No column is suggested as a term, so the candidates are now empty.');
}

function useModelCandidates() {
  const text = splitTerms(el.terms.value).join(', ');
  if (text === el.candidates.value) {
    setCandidatesStatus('The candidates are already the model\'s terms.');
    return;
  }
  changeField(FIELDS.candidates, text, text ? `The candidates are now the model's terms: ${text}.` : 'The model has no terms, so the candidates are now empty.');
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
  el.candidatesUndo.disabled = state.candidateUndo.length === 0;
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
      ...excludeRequest(),
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
  el.fitStatus.textContent = el.stopButton.hidden ? 'Fitting…' : 'Waiting for the search to end (Stop ends it), then fitting…';
  let answer;
  try {
    answer = await engine.fit(state.data.bytes, request);
  } catch (e) {
    if (seq !== state.fitSeq) return;
    finishBusy('');
    clearResult();
    // The engine has said what happened (onTrouble) unless it is another error.
    if (!(e instanceof EngineError)) showMessage(el.modelMessage, `The fit could not be run: ${e.message}`);
    else if (e.kind === 'stopped') showMessage(el.modelMessage, 'The fit was stopped together with the search. Press Fit to run it again.');
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
  state.fitRequest = request;
  renderResult(answer.ok);
  revealResult();
  finishBusy(`Fitted: ${plural(answer.ok.coefficients.length, 'coefficient')}, ${answer.ok.n} rows used.`);
  showChecksFor(answer.ok);
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
  state.fitRequest = null;
  el.result.hidden = true;
  el.staleNote.hidden = true;
  clearChecks();
}

function markStale() {
  if (state.report) el.staleNote.hidden = false;
}

function markChooseStale() {
  if (state.selection) el.chooseStale.hidden = false;
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
      if (/^missing value in /.test(d.reason)) return `${plural(d.count, 'row')} with ${d.reason.replace(/^missing value in /, 'a missing value in ')}${where}`;
      if (d.reason === 'left out by you') return `${plural(d.count, 'row')} by you${where}`;
      return `${plural(d.count, 'row')} (${d.reason})${where}`;
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

// ------------------------------------------------------ choosing the terms

const CRITERION_WORDS = {
  'adj-r2': 'adjusted R²',
  aic: 'AIC',
  bic: 'BIC',
  cp: "Mallows' Cp",
  cv: 'cross-validated error',
  'p-value': 'p-value route',
};

/** The columns of the comparison: [key, heading, significant digits, criterion]. */
const COMPARISON_COLUMNS = [
  ['k', 'k', null, null],
  ['r_squared', 'R²', 4, null],
  ['adj_r_squared', 'Adjusted R²', 4, 'adj-r2'],
  ['aic', 'AIC', 6, 'aic'],
  ['bic', 'BIC', 6, 'bic'],
  ['cp', 'Cp', 5, 'cp'],
  ['cv_rmse', 'CV RMSE', 4, 'cv'],
];

function sameTerms(a, b) {
  if (a.length !== b.length) return false;
  const x = [...a].sort();
  const y = [...b].sort();
  return x.every((t, i) => t === y[i]);
}

/** A set of terms in words: the terms, or what is left without any. */
function termsText(terms) {
  if (terms.length) return terms.join(', ');
  return el.intercept.checked ? 'no terms: the intercept alone' : 'no terms';
}

/** A share 0..1 as a whole percentage (for reading; the full value is in the title). */
function shareText(v) {
  if (v === null || v === undefined || typeof v !== 'number') return '—';
  return `${Math.round(v * 100)}%`;
}

function setProgress(share) {
  const pct = Math.max(0, Math.min(100, Math.round(share * 100)));
  el.searchProgress.setAttribute('aria-valuenow', String(pct));
  el.searchProgress.setAttribute('aria-valuetext', `${pct}% of the subsets covered`);
  el.searchProgressBar.style.width = `${pct}%`;
}

function setSearching(on, status) {
  el.searchButton.disabled = on;
  el.stopButton.hidden = !on;
  el.chooseForm.toggleAttribute('aria-busy', on);
  if (on) {
    el.searchProgress.hidden = false;
    setProgress(0);
  }
  el.searchStatus.textContent = status;
}

function buildSelectRequest() {
  if (!state.data) return { problem: 'Open a file, paste cells or open the demo data first.' };
  const response = responseTerm();
  if (!response) return { problem: 'Choose the column to explain (the response) in the Model first.' };
  const candidates = splitTerms(el.candidates.value);
  if (!candidates.length) return { problem: 'Write at least one candidate term, or press Use all suggested terms.' };
  const request = {
    response,
    candidates: candidates.join(', '),
    force: el.force.value,
    intercept: el.intercept.checked,
    by: el.chooseBy.value,
    search: el.searchWay.value,
    ...readRequest(state.data),
    ...excludeRequest(),
  };
  if (el.stability.checked) {
    const text = el.resamples.value.trim();
    const n = Number(text);
    if (!/^\d+$/.test(text) || n < 10 || n > 5000) {
      return { problem: `The number of resamples must be a whole number from 10 to 5000, not "${el.resamples.value}".` };
    }
    request.stability = n;
  }
  return { request };
}

async function runSearch() {
  const { request, problem } = buildSelectRequest();
  if (problem) {
    showMessage(el.chooseMessage, problem);
    return;
  }
  clearMessage(el.chooseMessage);
  const seq = ++state.searchSeq;
  const what = request.search === 'exhaustive' ? 'Searching every subset' : 'Searching step by step';
  setSearching(true, request.stability
    ? `${what}, then again on each of ${request.stability} resamples of the rows…`
    : `${what}…`);
  let answer;
  try {
    answer = await engine.select(state.data.bytes, request, (share) => {
      if (seq === state.searchSeq) setProgress(share);
    });
  } catch (e) {
    if (seq !== state.searchSeq) return;
    state.searchesDone += 1;
    el.searchProgress.hidden = true;
    if (e instanceof EngineError && e.kind === 'stopped') {
      const refocus = document.activeElement === el.stopButton;
      setSearching(false, 'Stopped.');
      // The Stop button goes away: keep the focus in the step.
      if (refocus) el.searchButton.focus();
      return;
    }
    setSearching(false, '');
    showMessage(el.chooseMessage, `The search could not be run: ${e.message}`);
    return;
  }
  if (seq !== state.searchSeq) return;
  state.searchesDone += 1;
  if (answer.error) {
    el.searchProgress.hidden = true;
    setSearching(false, '');
    showMessage(el.chooseMessage, `The search could not be run. ${answer.error}`);
    return;
  }
  setProgress(1);
  const r = answer.ok;
  const examined = r.models_examined ? `${plural(r.models_examined, 'model')} examined` : `search: ${r.search}`;
  setSearching(false, `Done: ${examined}${r.stability ? `, and ${plural(r.stability.resamples, 'resample')}` : ''}.`);
  renderSelection(r);
}

function stopSearch() {
  if (el.stopButton.hidden) return;
  engine.stop('Stopped.');
}

function clearSelection() {
  state.selection = null;
  state.searchSeq += 1;
  el.chooseResult.hidden = true;
  el.chooseStale.hidden = true;
  el.searchProgress.hidden = true;
  setSearching(false, '');
  clearMessage(el.chooseMessage);
}

/** Puts a set of terms into the model's terms (undoable) and fits it. */
function useTerms(terms) {
  const text = terms.join(', ');
  if (el.terms.value !== text) changeTerms(text, `The terms are now those of the set chosen: ${termsText(terms)}. Undo takes them back.`);
  else setColumnsStatus('The terms are already those of this set.');
  runFit();
}

function useButton(terms, label) {
  const b = document.createElement('button');
  b.type = 'button';
  b.className = 'use';
  b.textContent = 'Use this model';
  b.setAttribute('aria-label', label);
  b.addEventListener('click', () => useTerms(terms));
  return b;
}

function stepText(step, valueWord) {
  const verb = step.action === 'add' ? 'Added' : 'Dropped';
  return `${verb} ${step.term} (${valueWord} = ${valueWord === 'p' ? pValueText(step.value) : shortNumber(step.value, 6)}); then: ${termsText(step.terms)}.`;
}

function addStep(list, text, title) {
  const li = document.createElement('li');
  li.textContent = text;
  if (title) li.title = title;
  list.append(li);
}

function renderSelection(r) {
  state.selection = r;
  el.chooseResult.hidden = false;
  el.chooseStale.hidden = true;

  el.recommendReason.textContent = r.recommended.reason;
  el.recommendUse.onclick = () => useTerms(r.recommended.terms);
  el.recommendUse.setAttribute('aria-label', `Use the recommended model: ${termsText(r.recommended.terms)}`);

  const forced = r.forced.length ? `, always in: ${r.forced.join(', ')}` : '';
  el.searchFacts.textContent = `${r.n} rows used; ${plural(r.candidates.length, 'candidate term')}${forced}; `
    + `search: ${r.search}${r.models_examined ? `, ${plural(r.models_examined, 'model')} examined` : ''}; chosen by ${CRITERION_WORDS[r.by] || r.by}.`;

  const heads = ['Terms', ...COMPARISON_COLUMNS.map((c) => c[1]), 'Stability', 'Best by', 'Model'];
  const body = tableHead(el.comparisonTable, heads);
  const headCells = el.comparisonTable.tHead.rows[0].cells;
  COMPARISON_COLUMNS.forEach((c, j) => {
    if (c[3] === r.by) {
      headCells[j + 1].classList.add('chosen');
      headCells[j + 1].title = 'The measure chosen';
      const mark = document.createElement('span');
      mark.className = 'chosen-mark';
      mark.textContent = 'chosen';
      headCells[j + 1].append(mark);
    }
  });
  headCells[heads.length - 2].className = '';
  headCells[heads.length - 1].className = '';
  for (const c of r.comparison) {
    const tr = body.insertRow();
    const recommended = sameTerms(c.terms, r.recommended.terms);
    const th = addCell(tr, 'th', '', { scope: 'row', className: 'terms-cell' });
    if (recommended) {
      tr.className = 'recommended';
      const mark = document.createElement('strong');
      mark.className = 'rec-mark';
      mark.textContent = 'Recommended';
      th.append(mark, ' ');
    }
    th.append(termsText(c.terms));
    for (const [key, label, sig, crit] of COMPARISON_COLUMNS) {
      const td = sig === null ? addCell(tr, 'td', String(c[key]), { className: 'num' }) : numberCell(tr, c[key], sig, label);
      if (crit === r.by) td.classList.add('chosen');
    }
    const st = addCell(tr, 'td', shareText(c.stability), { className: 'num' });
    st.title = c.stability === null ? 'Stability: not checked (tick How stable?)' : `Stability: chosen in ${full(c.stability)} of the resamples`;
    addCell(tr, 'td', c.wins.map((w) => CRITERION_WORDS[w] || w).join(', '), { className: 'wins' });
    const act = tr.insertCell();
    act.className = 'actions';
    act.append(useButton(c.terms, `Use this model: ${termsText(c.terms)}`));
  }

  const route = r.p_value_route;
  el.routeIntro.textContent = `From all the candidates, the term with the largest p-value is dropped, one at a time, while that p-value is above ${route.alpha}. Shown for comparison: the p-values of the terms it keeps are too optimistic, as the same data chose them.`;
  el.routeSteps.textContent = '';
  for (const step of route.path) addStep(el.routeSteps, stepText(step, 'p'), `p-value ${full(step.value)}`);
  if (!route.path.length) addStep(el.routeSteps, `Nothing was dropped: every term had a p-value of at most ${route.alpha}.`);
  addStep(el.routeSteps, `It ends with: ${termsText(route.terms)}.`);

  el.pathSteps.textContent = '';
  const word = r.by === 'aic' ? 'AIC' : 'BIC';
  for (const step of r.path) addStep(el.pathSteps, stepText(step, word), `${word} ${full(step.value)}`);
  el.pathBlock.hidden = r.path.length === 0;
  el.pathBy.textContent = `(${r.search}, by ${word})`;

  const st = r.stability;
  el.stabilityBlock.hidden = !st;
  el.stabilityBars.textContent = '';
  if (st) {
    el.stabilityIntro.textContent = `How often each term was chosen when the search was repeated on ${st.resamples} resamples of the rows (seed ${st.seed}). `
      + `The recommended set itself was chosen in ${shareText(st.winner_share)} of them.`;
    for (const t of st.terms) {
      const li = document.createElement('li');
      const name = document.createElement('span');
      name.className = 'bar-term';
      name.textContent = t.term;
      const track = document.createElement('span');
      track.className = 'bar-track';
      track.setAttribute('aria-hidden', 'true');
      const fill = document.createElement('span');
      fill.className = 'bar-fill';
      fill.style.width = `${Math.max(0, Math.min(100, (typeof t.share === 'number' ? t.share : 0) * 100))}%`;
      track.append(fill);
      const pct = document.createElement('span');
      pct.className = 'bar-pct';
      pct.textContent = shareText(t.share);
      li.title = `${t.term}: chosen in ${full(t.share)} of the resamples`;
      li.append(name, track, pct);
      el.stabilityBars.append(li);
    }
  }

  el.chooseNotes.textContent = '';
  for (const n of r.notes) addItem(el.chooseNotes, n);
  el.chooseNotesBlock.hidden = r.notes.length === 0;
  el.chooseCautions.textContent = '';
  for (const c of r.cautions) addItem(el.chooseCautions, c);
}


// ------------------------------------------------------ rows left out

/** The rows left out, as fit, check and select requests take them. */
function excludeRequest() {
  return state.excluded.length ? { exclude_rows: [...state.excluded] } : {};
}

/** Changes the rows left out (undoable) and fits again. */
function changeExcluded(rows, status) {
  state.excludedUndo.push([...state.excluded]);
  if (state.excludedUndo.length > UNDO_DEPTH) state.excludedUndo.shift();
  state.excluded = rows;
  afterExcludedChange(status);
}

function afterExcludedChange(status) {
  renderExcluded();
  el.checkStatus.textContent = status;
  markChooseStale();
  if (state.fitRequest || state.report) runFit();
  else markStale();
}

function excludeRow(row) {
  if (state.excluded.includes(row)) return;
  changeExcluded([...state.excluded, row], `${rowWord()} ${row} is left out; fitting again…`);
}

function includeRow(row) {
  changeExcluded(state.excluded.filter((r) => r !== row), `${rowWord()} ${row} is back in; fitting again…`);
}

function undoExcluded() {
  if (!state.excludedUndo.length) return;
  state.excluded = state.excludedUndo.pop();
  afterExcludedChange(`Undone: ${state.excluded.length ? `left out now: ${state.excluded.join(', ')}` : 'no row is left out now'}; fitting again…`);
}

/** The list of rows left out, in the Model and the Checks alike. */
function renderExcluded() {
  for (const area of el.excludedAreas) {
    area.textContent = '';
    area.hidden = state.excluded.length === 0 && state.excludedUndo.length === 0;
    if (area.hidden) continue;
    const label = document.createElement('span');
    label.className = 'hint-title';
    label.textContent = state.excluded.length ? 'Rows left out by you:' : 'No row is left out by you.';
    area.append(label);
    const list = document.createElement('ul');
    list.className = 'excluded-list';
    for (const row of state.excluded) {
      const li = document.createElement('li');
      li.append(`${rowWord()} ${row} `);
      const b = document.createElement('button');
      b.type = 'button';
      b.className = 'include';
      b.textContent = 'Include again';
      b.setAttribute('aria-label', `Include ${rowWord().toLowerCase()} ${row} again`);
      b.addEventListener('click', () => includeRow(row));
      li.append(b);
      list.append(li);
    }
    area.append(list);
    const undo = document.createElement('button');
    undo.type = 'button';
    undo.className = 'undo-excluded';
    undo.textContent = 'Undo';
    undo.setAttribute('aria-label', 'Undo the last change to the rows left out');
    undo.disabled = state.excludedUndo.length === 0;
    undo.addEventListener('click', undoExcluded);
    area.append(undo);
    if (state.excluded.length > 1) {
      const all = document.createElement('button');
      all.type = 'button';
      all.className = 'include-all';
      all.textContent = 'Include all again';
      all.addEventListener('click', () => changeExcluded([], 'Every row is back in; fitting again…'));
      area.append(' ', all);
    }
  }
}

/** A button that leaves a row out of the fit. */
function excludeButton(row, text = 'Leave out') {
  const b = document.createElement('button');
  b.type = 'button';
  b.className = 'exclude';
  b.textContent = text;
  b.setAttribute('aria-label', `Leave ${rowWord().toLowerCase()} ${row} out of the fit`);
  b.addEventListener('click', () => {
    excludeRow(row);
    // This button goes when the checks are drawn again: the focus goes to
    // the list of rows left out, whose Undo takes the row back.
    const undo = el.excludedAreas[1].querySelector('.undo-excluded');
    if (undo) undo.focus();
  });
  return b;
}

// ---------------------------------------------------------------- checks

const SEVERITY_WORDS = { 3: 'Act on it', 2: 'Look at it', 1: 'Worth knowing', 0: 'Nothing found' };

/** The row numbers' name, as the preview's first column says it. */
function rowWord() {
  const format = state.data && state.data.inspection.load.format;
  return { workbook: 'Sheet row', paste: 'Pasted row' }[format] || 'File row';
}

function clearChecks() {
  state.checkSeq += 1;
  el.checks.hidden = true;
  el.checksBody.hidden = true;
  el.checksStale.hidden = true;
  el.checkButton.disabled = false;
  el.checkStatus.textContent = '';
  clearMessage(el.checksMessage);
  el.plots.textContent = '';
  state.plots.clear();
}

/** After a fit: the Checks step for it, run at once when the data are not large. */
function showChecksFor(report) {
  el.checks.hidden = false;
  if (!el.checksBody.hidden) el.checksStale.hidden = false;
  if (report.n <= AUTO_CHECK_ROWS) {
    runCheck();
  } else {
    el.checkStatus.textContent = `${report.n} rows: press Check this model to run the checks (they take a while on this many rows).`;
  }
}

async function runCheck() {
  if (!state.data || !state.fitRequest) return;
  const seq = ++state.checkSeq;
  const request = state.fitRequest;
  clearMessage(el.checksMessage);
  el.checkButton.disabled = true;
  el.checks.setAttribute('aria-busy', 'true');
  el.checkStatus.textContent = 'Checking…';
  let answer;
  try {
    answer = await engine.check(state.data.bytes, request);
  } catch (e) {
    if (seq !== state.checkSeq) return;
    state.checksDone += 1;
    finishCheck('');
    showMessage(el.checksMessage, e instanceof EngineError && e.kind === 'stopped'
      ? 'The checks were stopped together with the search. Press Check this model to run them again.'
      : `The checks could not be run: ${e.message}`);
    return;
  }
  if (seq !== state.checkSeq) return;
  state.checksDone += 1;
  if (answer.error) {
    finishCheck('');
    showMessage(el.checksMessage, `The checks could not be run. ${answer.error}`);
    return;
  }
  el.checksStale.hidden = true;
  renderChecks(answer.ok.check);
  finishCheck(`Checked: ${plural(answer.ok.check.findings.filter((f) => f.severity > 0).length, 'finding')}, ${plural(answer.ok.figures.length, 'figure')}.`);
  await renderPlots(answer.ok.figures, seq);
}

function finishCheck(status) {
  el.checkButton.disabled = false;
  el.checks.removeAttribute('aria-busy');
  el.checkStatus.textContent = status;
}

function testRow(body, name, asks, statistic, df, p, { title, statLabel = 'statistic' } = {}) {
  const tr = body.insertRow();
  const th = addCell(tr, 'th', name, { scope: 'row' });
  if (title) th.title = title;
  addCell(tr, 'td', asks, { className: 'asks' });
  numberCell(tr, statistic, 5, statLabel);
  addCell(tr, 'td', df, { className: 'num' });
  numberCell(tr, p, 'p', 'p-value');
}

function notRun(body, name, asks, why) {
  const tr = body.insertRow();
  addCell(tr, 'th', name, { scope: 'row' });
  addCell(tr, 'td', asks, { className: 'asks' });
  const td = addCell(tr, 'td', why, { className: 'aliased' });
  td.colSpan = 3;
}

function renderChecks(c) {
  el.checksBody.hidden = false;

  el.findings.textContent = '';
  const ranked = c.findings.map((f, i) => [f, i]).sort((a, b) => b[0].severity - a[0].severity || a[1] - b[1]).map((x) => x[0]);
  for (const f of ranked) {
    const li = document.createElement('li');
    li.className = `finding sev-${f.severity}`;
    const sev = document.createElement('strong');
    sev.className = 'sev';
    sev.textContent = SEVERITY_WORDS[f.severity] || `Severity ${f.severity}`;
    const text = document.createElement('span');
    text.className = 'finding-text';
    text.textContent = f.text;
    li.append(sev, ' ', text);
    if (f.rule) {
      const rule = document.createElement('span');
      rule.className = 'rule';
      rule.textContent = ` Rule: ${f.rule}.`;
      li.append(rule);
    }
    el.findings.append(li);
  }

  const body = tableHead(el.testsTable, ['Test', 'What it asks', 'Statistic', 'df', 'p-value']);
  el.testsTable.tHead.rows[0].cells[1].className = '';
  const nm = c.normality;
  const normalAsk = 'Could the residuals come from a normal distribution?';
  if (nm.shapiro_wilk) testRow(body, 'Shapiro–Wilk', normalAsk, nm.shapiro_wilk.statistic, '', nm.shapiro_wilk.p_value, { statLabel: 'W' });
  else notRun(body, 'Shapiro–Wilk', normalAsk, 'not computed for these data');
  if (nm.anderson_darling) {
    testRow(body, 'Anderson–Darling', normalAsk, nm.anderson_darling.statistic, '', nm.anderson_darling.p_value,
      { statLabel: 'A²', title: `adjusted A² ${full(nm.anderson_darling.adjusted)}` });
  } else notRun(body, 'Anderson–Darling', normalAsk, 'not computed for these data');
  if (nm.jarque_bera) testRow(body, 'Jarque–Bera', 'Are the skewness and tails of the residuals those of a normal distribution?', nm.jarque_bera.statistic, '2', nm.jarque_bera.p_value);
  const spreadAsk = 'Does the spread of the residuals change with the terms?';
  if (c.breusch_pagan) testRow(body, 'Breusch–Pagan', spreadAsk, c.breusch_pagan.statistic, String(c.breusch_pagan.df), c.breusch_pagan.p_value);
  else notRun(body, 'Breusch–Pagan', spreadAsk, 'not computed for this model');
  const orderAsk = 'Are neighbouring residuals, in the order of the rows, related?';
  if (c.durbin_watson) {
    testRow(body, 'Durbin–Watson', orderAsk, c.durbin_watson.statistic, '', c.durbin_watson.p_value,
      { statLabel: 'd', title: `${c.durbin_watson.method}; d would be about ${full(c.durbin_watson.mean_under_independence)} without any relation` });
  } else notRun(body, 'Durbin–Watson', orderAsk, 'not computed for this model');
  const resetAsk = 'Do powers of the fitted values add to the model (a missing curve or interaction)?';
  if (c.reset) testRow(body, 'RESET', resetAsk, c.reset.statistic, `${c.reset.df1}, ${c.reset.df2}`, c.reset.p_value, { statLabel: 'F' });
  else notRun(body, 'RESET', resetAsk, 'not computed for this model');
  for (const cv of c.curvature) {
    testRow(body, `Curvature: ${cv.term}`, `Does ${cv.term} need a curve (its square added)?`, cv.t, '', cv.p_value, { statLabel: 't' });
  }

  el.checkFigures.textContent = '';
  numFigure(el.checkFigures, 'PRESS', c.press, 6, '(sum of the squared errors when each row is predicted without it)');

  const vb = tableHead(el.vifTable, ['Term', 'df', 'VIF', 'GVIF', 'GVIF^(1/(2·df))']);
  for (const t of c.collinearity.terms) {
    const tr = vb.insertRow();
    addCell(tr, 'th', t.term, { scope: 'row' });
    addCell(tr, 'td', String(t.df), { className: 'num' });
    numberCell(tr, t.vif, 4, 'VIF');
    numberCell(tr, t.gvif, 4, 'GVIF');
    numberCell(tr, t.gvif_adjusted, 4, 'GVIF^(1/(2·df))');
  }
  if (!c.collinearity.terms.length) {
    const tr = vb.insertRow();
    const td = addCell(tr, 'td', 'No terms to compare.', { className: 'aliased' });
    td.colSpan = 5;
  }
  el.collinearityFigures.textContent = '';
  numFigure(el.collinearityFigures, 'Condition number', c.collinearity.condition_number, 4, '(of the design with scaled columns)');
  numFigure(el.collinearityFigures, 'Without the intercept', c.collinearity.condition_number_predictors, 4);

  const word = rowWord();
  const ib = tableHead(el.influenceTable, [word, "Cook's distance", 'Leverage', 'Studentized residual', 'Residual', 'Fitted', 'DFFITS', 'The fit']);
  el.influenceTable.tHead.rows[0].cells[7].className = '';
  const top = c.rows.filter((x) => typeof x.cooks_distance === 'number')
    .sort((a, b) => b.cooks_distance - a.cooks_distance).slice(0, INFLUENTIAL_ROWS);
  for (const x of top) {
    const tr = ib.insertRow();
    addCell(tr, 'th', String(x.row), { scope: 'row', className: 'rownum' });
    numberCell(tr, x.cooks_distance, 3, "Cook's distance");
    numberCell(tr, x.leverage, 3, 'Leverage');
    numberCell(tr, x.studentized, 3, 'Studentized residual');
    numberCell(tr, x.residual, 4, 'Residual');
    numberCell(tr, x.fitted, 5, 'Fitted');
    numberCell(tr, x.dffits, 3, 'DFFITS');
    const act = tr.insertCell();
    act.className = 'actions';
    act.append(excludeButton(x.row));
  }
  el.influenceHint.textContent = `The ${Math.min(INFLUENTIAL_ROWS, top.length)} rows with the largest Cook's distance, of ${c.rows.length}; ${word.toLowerCase()}s are numbered as the Data preview numbers them.`;

  el.checksCautions.textContent = '';
  for (const x of c.fit.cautions) addItem(el.checksCautions, x);
}

// ----------------------------------------------------------------- figures

// Where a figure's points land on its canvas. This mirrors how
// src/plot/draw.rs lays out a chart with plotters 0.3.7, and must change
// with it:
//   - the data range is `extent()`: the x and y ranges of every point set
//     and every line (contour lines count for x only), each padded by 5% of
//     its width on both sides (5% of max(|value|, 1) when the width is 0);
//   - `.margin(14)` on every side, then the caption: plotters' web font code
//     measures the title as an inline-block span of 22 px sans-serif on the
//     page, height h, and takes h + 2·min(floor(h/2), 5) pixels from the top;
//   - `.x_label_area_size(46)` at the bottom and `.y_label_area_size(64)` at
//     the left; the plotting area is what is left.
// Heatmaps and histograms have no points, and get no pointing.
const CHART = { margin: 14, captionSize: 22, xLabelArea: 46, yLabelArea: 64 };
const POINT_RADIUS_PX = 12; // how near (canvas pixels) the pointer must be

function paddedRange(values) {
  let lo = Infinity;
  let hi = -Infinity;
  for (const v of values) {
    if (Number.isFinite(v)) {
      if (v < lo) lo = v;
      if (v > hi) hi = v;
    }
  }
  if (!(Number.isFinite(lo) && Number.isFinite(hi))) return [0, 1];
  const pad = hi > lo ? (hi - lo) * 0.05 : Math.max(Math.abs(lo), 1) * 0.05;
  return [lo - pad, hi + pad];
}

function figureExtent(fig) {
  const xs = [];
  const ys = [];
  const add = (to, values) => { for (const v of values) to.push(v); };
  for (const p of fig.points) { add(xs, p.x); add(ys, p.y); }
  for (const l of fig.lines) {
    add(xs, l.x);
    if (l.role !== 'contour') add(ys, l.y);
  }
  if (fig.bars) {
    add(xs, fig.bars.edges);
    ys.push(0, fig.bars.counts.length ? fig.bars.counts.reduce((a, b) => Math.max(a, b)) : 1);
  }
  return { x: paddedRange(xs), y: paddedRange(ys) };
}

/** The caption's height as plotters measures it on this page. */
function captionHeight(title) {
  const span = document.createElement('span');
  span.textContent = title;
  span.setAttribute('style', `display: inline-block; font-family:sans-serif; font-style:normal; font-size: ${CHART.captionSize}px; position: fixed; top: 100%`);
  document.body.append(span);
  const h = span.offsetHeight;
  span.remove();
  return h + 2 * Math.min(Math.floor(h / 2), 5);
}

function plotArea(canvas, fig) {
  const top = CHART.margin + captionHeight(fig.title);
  return {
    left: CHART.margin + CHART.yLabelArea,
    right: canvas.width - CHART.margin,
    top,
    bottom: canvas.height - CHART.margin - CHART.xLabelArea,
  };
}

/** A point's place on the canvas, in canvas pixels. */
function toPixel(plot, x, y) {
  const { extent: e, area: a } = plot;
  return {
    px: a.left + ((x - e.x[0]) / (e.x[1] - e.x[0])) * (a.right - a.left),
    py: a.bottom - ((y - e.y[0]) / (e.y[1] - e.y[0])) * (a.bottom - a.top),
  };
}

/** Every point of a figure in canvas pixels, ordered by x (for the arrow keys). */
function plotPoints(plot) {
  const out = [];
  for (const set of plot.figure.points) {
    for (let i = 0; i < set.x.length; i++) {
      out.push({ x: set.x[i], y: set.y[i], row: set.rows[i], ...toPixel(plot, set.x[i], set.y[i]) });
    }
  }
  return out.sort((a, b) => a.px - b.px || a.py - b.py);
}

function nearestPoint(plot, px, py) {
  let best = null;
  let bestD = POINT_RADIUS_PX * POINT_RADIUS_PX;
  for (const p of plot.order) {
    const d = (p.px - px) ** 2 + (p.py - py) ** 2;
    if (d <= bestD) { best = p; bestD = d; }
  }
  return best;
}

function hidePoint(plot) {
  plot.tip.hidden = true;
  plot.ring.hidden = true;
}

/** Shows a point's row; a point chosen (clicked or by the keys) also gets a button to leave it out. */
function showPoint(plot, point, chosen = false) {
  const { canvas, tip, ring, readout, figure } = plot;
  if (!point) {
    hidePoint(plot);
    return;
  }
  if (chosen) {
    plot.actions.textContent = '';
    plot.actions.append(excludeButton(point.row, `Leave ${rowWord().toLowerCase()} ${point.row} out of the fit`));
  }
  const text = `${rowWord()} ${point.row}`;
  const detail = `${figure.x_label || 'x'} ${shortNumber(point.x, 4)}, ${figure.y_label || 'y'} ${shortNumber(point.y, 4)}`;
  tip.textContent = '';
  const strong = document.createElement('strong');
  strong.textContent = text;
  tip.append(strong, document.createElement('br'), detail);
  readout.textContent = `${figure.title}: ${text} (${detail}).`;
  // Place the tip next to the point, in CSS pixels of the shown canvas.
  const scale = canvas.clientWidth / canvas.width;
  tip.hidden = false;
  const x = point.px * scale;
  const y = point.py * scale;
  ring.hidden = false;
  ring.style.left = `${x}px`;
  ring.style.top = `${y}px`;
  const w = tip.offsetWidth;
  tip.style.left = `${Math.max(0, Math.min(canvas.clientWidth - w, x + 12 > canvas.clientWidth - w ? x - w - 12 : x + 12))}px`;
  tip.style.top = `${Math.max(0, y - tip.offsetHeight - 8)}px`;
}

function pointerAt(plot, event) {
  const rect = plot.canvas.getBoundingClientRect();
  const px = ((event.clientX - rect.left) * plot.canvas.width) / rect.width;
  const py = ((event.clientY - rect.top) * plot.canvas.height) / rect.height;
  return nearestPoint(plot, px, py);
}

function wirePointing(plot) {
  const { canvas } = plot;
  canvas.addEventListener('mousemove', (e) => {
    const p = pointerAt(plot, e);
    if (p) showPoint(plot, p);
    else if (!plot.pinned) hidePoint(plot);
  });
  canvas.addEventListener('mouseleave', () => { if (!plot.pinned) hidePoint(plot); });
  canvas.addEventListener('click', (e) => {
    const p = pointerAt(plot, e);
    plot.pinned = !!p;
    showPoint(plot, p, true);
  });
  canvas.addEventListener('keydown', (e) => {
    const n = plot.order.length;
    if (!n) return;
    let i = plot.keyIndex;
    if (e.key === 'ArrowRight' || e.key === 'ArrowDown') i = i === null ? 0 : Math.min(n - 1, i + 1);
    else if (e.key === 'ArrowLeft' || e.key === 'ArrowUp') i = i === null ? 0 : Math.max(0, i - 1);
    else if (e.key === 'Home') i = 0;
    else if (e.key === 'End') i = n - 1;
    else if (e.key === 'Escape') { hidePoint(plot); plot.pinned = false; return; }
    else return;
    e.preventDefault();
    plot.keyIndex = i;
    plot.pinned = true;
    showPoint(plot, plot.order[i], true);
  });
  // The tip goes with the focus; the row and its button stay below the figure.
  canvas.addEventListener('blur', () => { hidePoint(plot); plot.pinned = false; });
}

async function renderPlots(figures, seq) {
  el.plots.textContent = '';
  state.plots.clear();
  const made = figures.map((fig, i) => {
    const box = document.createElement('figure');
    box.className = 'plot';
    const stage = document.createElement('div');
    stage.className = 'plot-stage';
    const canvas = document.createElement('canvas');
    canvas.id = `figure-${i + 1}-${String(fig.id).replace(/[^A-Za-z0-9-]/g, '_')}`;
    // A correlation matrix needs room for its labels on two sides.
    canvas.width = fig.heatmap ? 900 : 640;
    canvas.height = fig.heatmap ? 720 : 440;
    if (fig.heatmap) box.classList.add('wide');
    canvas.dataset.figure = fig.id;
    const pointable = fig.points.some((p) => p.x.length > 0);
    canvas.setAttribute('role', 'img');
    const axes = fig.x_label && fig.y_label ? `: ${fig.y_label} against ${fig.x_label}` : '';
    canvas.setAttribute('aria-label', `${fig.title}${axes}.${pointable ? ' Arrow keys step through its dots and tell their rows.' : ''}`);
    if (pointable) canvas.tabIndex = 0;
    const tip = document.createElement('div');
    tip.className = 'tip';
    tip.hidden = true;
    tip.setAttribute('aria-hidden', 'true');
    const ring = document.createElement('div');
    ring.className = 'ring';
    ring.hidden = true;
    ring.setAttribute('aria-hidden', 'true');
    stage.append(canvas, ring, tip);
    const below = document.createElement('div');
    below.className = 'point-below';
    const readout = document.createElement('p');
    readout.className = 'point-readout';
    readout.setAttribute('aria-live', 'polite');
    const actions = document.createElement('span');
    actions.className = 'point-actions';
    below.append(readout, actions);
    box.append(stage, below);
    el.plots.append(box);
    return { fig, canvas, tip, ring, readout, actions, pointable };
  });
  for (const m of made) {
    const problem = await painter.draw(m.canvas.id, m.fig);
    if (seq !== state.checkSeq) return;
    if (problem) {
      m.readout.textContent = problem;
      m.readout.classList.add('problem');
      continue;
    }
    if (!m.pointable) continue;
    const plot = { figure: m.fig, canvas: m.canvas, tip: m.tip, ring: m.ring, readout: m.readout, actions: m.actions, extent: figureExtent(m.fig), pinned: false, keyIndex: null };
    plot.area = plotArea(m.canvas, m.fig);
    plot.order = plotPoints(plot);
    state.plots.set(m.canvas.id, plot);
    wirePointing(plot);
  }
  state.figuresDrawn += 1;
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
el.responseColumn.addEventListener('change', () => { if (state.data) { renderColumns(); defaultCandidates(); } });
for (const c of [el.responseColumn, el.responseTransform, el.intercept]) c.addEventListener('change', markChooseStale);
for (const c of [el.terms, el.intercept, el.level, el.hc3]) {
  c.addEventListener('input', markStale);
  c.addEventListener('change', markStale);
}
el.candidates.addEventListener('input', () => { state.candidatesEdited = true; markChooseStale(); });
for (const c of [el.force, el.chooseBy, el.searchWay, el.stability, el.resamples]) {
  c.addEventListener('input', markChooseStale);
  c.addEventListener('change', markChooseStale);
}
el.candidatesSuggested.addEventListener('click', useSuggestedCandidates);
el.candidatesFromModel.addEventListener('click', useModelCandidates);
el.candidatesUndo.addEventListener('click', () => undoField(FIELDS.candidates));
el.chooseForm.addEventListener('submit', (e) => {
  e.preventDefault();
  if (!el.searchButton.disabled) runSearch();
});
el.candidates.addEventListener('keydown', (e) => {
  if (e.key === 'Enter' && !e.shiftKey && !e.isComposing) {
    e.preventDefault();
    el.chooseForm.requestSubmit();
  }
});
el.stopButton.addEventListener('click', stopSearch);
el.checkButton.addEventListener('click', () => { runCheck(); });

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
  /** How many searches started from the page have ended (answered or stopped). */
  searchesDone() {
    return state.searchesDone;
  },
  /** How many checks started from the page have been answered. */
  checksDone() {
    return state.checksDone;
  },
  /** How many checks have had all their figures drawn. */
  figuresDrawn() {
    return state.figuresDrawn;
  },
  /**
   * Where the page thinks point i (in x order) of a figure is: CSS pixels
   * from the canvas's top left, canvas pixels, and its row; null if none.
   */
  figurePoint(canvasId, i) {
    const plot = state.plots.get(canvasId);
    if (!plot || !plot.order[i]) return null;
    const p = plot.order[i];
    const scale = plot.canvas.clientWidth / plot.canvas.width;
    return { x: p.px * scale, y: p.py * scale, px: p.px, py: p.py, row: p.row, count: plot.order.length };
  },
};

if (location.hash === '#demo') openDemo();
