// UI wiring: loading a table, looking at its columns, choosing a model and
// its terms, showing the result and its checks. No statistics here: the
// table, its column profile and every number shown come from the wasm
// (`inspect_progress`, `fit_bytes`, `select_bytes`, `check_bytes`, the
// equation from `equation_text`), and the figures are drawn by it
// (`draw_figure`). Text from the file or the result goes into the page with
// textContent only. The names the user gives to the codes of a category are
// labels of the page's own: requests carry the codes, and the names are
// written beside them where a level is shown.
import { Engine, EngineError, Painter, base64ToBytes } from './engine.js';

const PREVIEW_ROWS = 10;
const UNDO_DEPTH = 30;
const DEMO = { response: 'energy_mwh', transform: 'log' };
/** A fit of at most this many rows is checked at once; larger ones on request. */
const AUTO_CHECK_ROWS = 20000;
/** The most influential rows listed in the Checks. */
const INFLUENTIAL_ROWS = 10;
/**
 * The largest file the page reads (256 MiB). A file is refused before it is
 * read when it is larger: the page keeps the bytes, the calculation worker
 * gets a copy of them with each request, and the tables built from them must
 * fit in the wasm's memory (at most 4 GiB) beside them. The readers' own
 * limit, 50 million cells, is reached at about this size too.
 */
const MAX_FILE_BYTES = 256 * 1024 * 1024;
/** Predictions listed on the page; Copy predictions copies all of them. */
const PREDICTION_ROWS_SHOWN = 500;
/** A load still running after this long (ms) shows its progress bar and Cancel. */
const LOAD_BAR_AFTER_MS = 250;
/** The longest name of a code, in characters. */
const MAX_CODE_NAME = 60;

const $ = (id) => document.getElementById(id);
const el = {
  fileInput: $('file-input'),
  loadBlock: $('load-block'),
  loadStatus: $('load-status'),
  loadProgress: $('load-progress'),
  loadProgressBar: $('load-progress-bar'),
  loadPercent: $('load-percent'),
  loadCancel: $('load-cancel'),
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
  namesCopyHint: $('names-copy-hint'),
  equationBlock: $('equation-block'),
  equation: $('equation'),
  equationHint: $('equation-hint'),
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
  comparisonNames: $('comparison-names'),
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
  predict: $('predict'),
  predictStale: $('predict-stale'),
  caseForm: $('case-form'),
  caseHint: $('case-hint'),
  caseFields: $('case-fields'),
  caseButton: $('case-button'),
  caseStatus: $('case-status'),
  casesFile: $('cases-file'),
  casesPaste: $('cases-paste'),
  casesPasteButton: $('cases-paste-button'),
  casesSheetField: $('cases-sheet-field'),
  casesSheet: $('cases-sheet'),
  casesStatus: $('cases-status'),
  predictMessage: $('predict-message'),
  predictResult: $('predict-result'),
  predictFacts: $('predict-facts'),
  predictionsTable: $('predictions-table'),
  copyPredictions: $('copy-predictions'),
  copyPredictionsStatus: $('copy-predictions-status'),
  predictNotesBlock: $('predict-notes-block'),
  predictNotes: $('predict-notes'),
  predictCautions: $('predict-cautions'),
  copyCandidates: $('copy-candidates'),
  copyCandidatesStatus: $('copy-candidates-status'),
  keep: $('keep'),
  keepMessage: $('keep-message'),
  formulaForm: $('formula-form'),
  formulaCells: $('formula-cells'),
  formulaRow: $('formula-row'),
  formulaSeparator: $('formula-separator'),
  formulaComma: $('formula-comma'),
  formulaButton: $('formula-button'),
  formulaStatus: $('formula-status'),
  formulaOut: $('formula-out'),
  formulaText: $('formula-text'),
  formulaFirst: $('formula-first'),
  formulaCopy: $('formula-copy'),
  formulaCopyStatus: $('formula-copy-status'),
  formulaNotes: $('formula-notes'),
  workbookButton: $('workbook-button'),
  reportButton: $('report-button'),
  filesStatus: $('files-status'),
  sessionData: $('session-data'),
  sessionSave: $('session-save'),
  sessionStatus: $('session-status'),
  sessionFile: $('session-file'),
  sessionBlock: $('session-block'),
  sessionNotes: $('session-notes'),
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
  inputs: null, // {response, transformed, inputs} of the model in the Result
  inputsSeq: 0,
  caseValues: new Map(), // column -> what the user put in the one-case form
  newCases: null, // {name, bytes, read: {paste?, sheet?}, load} of the many-cases file or paste
  prediction: null, // {report, source: 'case' | 'cases', name, format}
  predictSeq: 0,
  predictsDone: 0, // predictions answered, good or bad (for the tests)
  check: null, // {report: CheckReport, request} of the checks shown
  formula: null, // {formula, scale, inputs, notes, request} of the formula shown
  cellLetters: new Map(), // column -> the sheet column the user gave it for the formula
  copied: null, // the text last put on the clipboard (for the tests)
  exportsDone: 0, // exports answered, good or bad (for the tests)
  sessionsOpened: 0, // session files dealt with, opened or refused (for the tests)
  levelNames: {}, // column -> {code: name}: the names the user gave to the codes of a category
  naming: null, // {column, values: {code: text typed}, problem} while the names of a column's codes are edited
  loading: null, // {name, share, shown, cancelled, timer} of the load whose progress the Data step shows
  stoppedBy: null, // 'search' or 'load': what the user ended the worker for, last
  equationSeq: 0,
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

/**
 * Asks the wasm to read and profile the bytes. Resolves with its answer or
 * rejects with an EngineError (which the engine has already reported; kind
 * 'stopped' when the user cancelled the load). With `load` (from
 * `startLoad`), the Data step shows how much of the file is read, and a
 * Cancel button, while it runs.
 */
async function inspectBytes(bytes, read, kinds, load = null) {
  const request = { ...read, preview_rows: PREVIEW_ROWS };
  if (kinds && Object.keys(kinds).length) request.kinds = kinds;
  try {
    return await engine.inspect(bytes, request, load ? (share, phase) => loadProgress(load, share, phase) : null);
  } finally {
    if (load) endLoad(load);
    state.inspectsDone += 1;
  }
}

// ------------------------------------------------------- a load under way

/**
 * A load of the data about to start: its bar and Cancel button appear only
 * if it is still running after LOAD_BAR_AFTER_MS, so a small file never
 * flashes them. `verb` says what is done ("Reading", "Reading again").
 */
function startLoad(name, verb = 'Reading') {
  if (state.loading) endLoad(state.loading);
  const load = { name, verb, share: 0, phase: 'read', shown: false, cancelled: false, timer: null };
  load.timer = setTimeout(() => {
    if (state.loading !== load) return;
    load.shown = true;
    el.loadBlock.hidden = false;
    renderLoad(load);
  }, LOAD_BAR_AFTER_MS);
  state.loading = load;
  return load;
}

function loadProgress(load, share, phase) {
  load.share = share;
  if (phase) load.phase = phase;
  if (load.shown && state.loading === load) renderLoad(load);
}

function renderLoad(load) {
  const pct = Math.max(0, Math.min(100, Math.floor(load.share * 100)));
  el.loadProgress.setAttribute('aria-valuenow', String(pct));
  const columns = load.phase === 'columns';
  el.loadProgress.setAttribute('aria-valuetext', columns ? `${pct}%: "${load.name}" read, looking at its columns` : `${pct}% of "${load.name}" read`);
  el.loadProgressBar.style.width = `${pct}%`;
  el.loadPercent.textContent = `${pct}%`;
  // The status is read out when it changes, so it changes only twice; the bar tells the share.
  const status = columns ? `Read "${load.name}"; looking at its columns…` : `${load.verb} "${load.name}"…`;
  if (el.loadStatus.textContent !== status) el.loadStatus.textContent = status;
}

function endLoad(load) {
  clearTimeout(load.timer);
  if (state.loading !== load) return;
  state.loading = null;
  const refocus = document.activeElement === el.loadCancel;
  el.loadBlock.hidden = true;
  // The Cancel button goes away: keep the focus in the step.
  if (refocus) el.fileInput.focus();
}

/** Cancel: ends the worker, and with it the load (a running call hears no message). */
function cancelLoad() {
  const load = state.loading;
  if (!load) return;
  load.cancelled = true;
  state.stoppedBy = 'load';
  engine.stop('Cancelled.');
}

/** How a calculation the user did not stop himself was ended, for its message. */
function stoppedWords() {
  return state.stoppedBy === 'load' ? 'when a load was cancelled' : 'together with the search';
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

/**
 * Reads bytes as the data of the page. `name` is how the page names them;
 * `fileName` the file's own name, as the exports record it.
 */
async function loadBytes(name, bytes, { paste = false, fileName = name } = {}) {
  clearMessage(el.dataMessage);
  const read = paste ? { paste: true } : {};
  const seq = ++state.inspectSeq;
  const load = startLoad(name);
  let answer;
  try {
    answer = await inspectBytes(bytes, read, null, load);
  } catch (e) {
    if (seq !== state.inspectSeq) return false;
    if (e instanceof EngineError && e.kind === 'stopped') {
      showMessage(el.dataMessage, load.cancelled
        ? `Loading "${name}" was cancelled, so it was not opened.${keptNote() || ' No data are open yet.'}`
        : `Loading "${name}" was stopped ${stoppedWords()}; open it again to load it.${keptNote()}`);
    } else {
      showMessage(el.dataMessage, `"${name}" could not be opened: ${e.message}${keptNote()}`);
    }
    return false;
  }
  if (seq !== state.inspectSeq) return false;
  if (answer.error) {
    showMessage(el.dataMessage, `"${name}" could not be opened: ${readError(answer.error)}${keptNote()}`);
    return false;
  }
  const inspection = answer.ok;
  state.data = { name, fileName, bytes, read, kinds: {}, detected: detectedKinds(inspection), inspection };
  state.levelNames = {};
  state.naming = null;
  state.undo = [];
  state.candidateUndo = [];
  state.candidatesEdited = false;
  state.excluded = [];
  state.excludedUndo = [];
  forgetPredictions();
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
  const load = startLoad(d.name, 'Reading again');
  let answer;
  try {
    answer = await inspectBytes(d.bytes, readRequest({ read }), kinds, load);
  } catch (e) {
    if (seq === state.inspectSeq) {
      const stopped = e instanceof EngineError && e.kind === 'stopped';
      showMessage(el.dataMessage, stopped
        ? `Reading "${d.name}" again was ${load.cancelled ? 'cancelled' : `stopped ${stoppedWords()}`}. The data stay as they were read before.`
        : `"${d.name}" could not be read again: ${e.message} The data stay as they were read before.`);
      renderReadControls();
      if (state.data === d) renderColumns();
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
    // Names of codes stay with the columns that are still there.
    const names = new Set(answer.ok.preview.header);
    for (const c of Object.keys(state.levelNames)) if (!names.has(c)) delete state.levelNames[c];
    state.naming = null;
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

/**
 * The contents of a file the user picked, by `read` (arrayBuffer or text),
 * or null after saying in the Data step why not (too big, unreadable); what
 * was open stays.
 */
async function pickedContents(file, read) {
  const big = tooBig(file);
  if (big) {
    showMessage(el.dataMessage, `${big}${keptNote()}`);
    return null;
  }
  try {
    return await read(file);
  } catch (e) {
    showMessage(el.dataMessage, `"${file.name}" could not be read from the disk: ${e.message}${keptNote()}`);
    return null;
  }
}

async function loadFile(file) {
  if (!file) return;
  const buf = await pickedContents(file, (f) => f.arrayBuffer());
  if (buf === null) return;
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
  const ok = await loadBytes(`${node.dataset.name} (invented demo data)`, bytes, { fileName: node.dataset.name });
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
  const before = stack.pop();
  f.undoButton.disabled = stack.length === 0;
  // The Columns panel's Undo also takes back names given to codes.
  if (typeof before !== 'string') {
    undoNames(before);
    return;
  }
  f.input.value = before;
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
    const codes = codesOf(col.name);
    if (codes && codes.length) {
      const b = document.createElement('button');
      b.type = 'button';
      b.className = 'name-codes';
      b.dataset.column = col.name;
      b.textContent = namesOf(col.name) ? 'Rename the codes' : 'Name the codes';
      b.setAttribute('aria-label', `${b.textContent} of ${col.name}`);
      b.setAttribute('aria-expanded', String(!!state.naming && state.naming.column === col.name));
      b.addEventListener('click', () => (state.naming && state.naming.column === col.name ? closeNaming() : openNaming(col.name)));
      kindCell.append(b);
    }
    const named = namesList(col.name);
    if (named) {
      const list = document.createElement('span');
      list.className = 'code-names';
      list.textContent = `Named: ${named}`;
      kindCell.append(list);
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
    if (state.naming && state.naming.column === col.name && codes && codes.length) namingRow(body, col.name, codes);
  }
}

// ------------------------------------------------------ names of codes

/** The names the user gave to the codes of a column, {code: name}, or null. */
function namesOf(column) {
  const m = Object.prototype.hasOwnProperty.call(state.levelNames, column) ? state.levelNames[column] : null;
  return m && Object.keys(m).length ? m : null;
}

/** The codes of a coded category, as the wasm lists them (the model's level labels), or null. */
function codesOf(column) {
  const codes = state.data && state.data.inspection.codes;
  return codes && Object.prototype.hasOwnProperty.call(codes, column) ? codes[column] : null;
}

/** The name of one code of a column, or null. */
function nameOf(column, code) {
  const m = namesOf(column);
  return m && Object.prototype.hasOwnProperty.call(m, code) ? m[code] : null;
}

/** A level as the page shows it: the code, with its name beside it when it has one ("3 (coastal)"). */
function levelText(column, level) {
  const name = nameOf(column, level);
  return name === null ? level : `${level} (${name})`;
}

/**
 * A design column's label with the names of its codes beside them:
 * climate_zone=3 → climate_zone=3 (coastal), also inside a product
 * (climate_zone=3*retrofit). A label is its factors joined by "*", and a
 * category's factor is column=level (src/terms/design.rs).
 */
function labelText(label) {
  const named = Object.keys(state.levelNames).filter((c) => namesOf(c));
  if (!named.length) return label;
  let out = '';
  let i = 0;
  for (;;) {
    for (const c of named) {
      if (!label.startsWith(`${c}=`, i)) continue;
      const from = i + c.length + 1;
      const code = Object.keys(state.levelNames[c])
        .filter((k) => label.startsWith(k, from) && (from + k.length === label.length || label[from + k.length] === '*'))
        .sort((a, b) => b.length - a.length)[0];
      if (code === undefined) continue;
      out += `${c}=${code} (${state.levelNames[c][code]})`;
      i = from + code.length;
      break;
    }
    const star = label.indexOf('*', i);
    if (star === -1) return out + label.slice(i);
    out += label.slice(i, star + 1);
    i = star + 1;
  }
}

function unquoted(text) {
  return /^"(?:[^"]|"")*"$/.test(text) ? text.slice(1, -1).replace(/""/g, '"') : text;
}

/** A term as written, with the name of a reference level beside it: cat(zone, ref=3) → cat(zone, ref=3 (coastal)). */
function termText(term) {
  if (!Object.keys(state.levelNames).length) return term;
  return term.replace(/(cat\(\s*("(?:[^"]|"")*"|[^,()"]+?)\s*,\s*ref\s*=\s*)("(?:[^"]|"")*"|[^)\s]+)(\s*\))/g, (m, head, col, ref, tail) => {
    const name = nameOf(unquoted(col.trim()), unquoted(ref));
    return name === null ? m : `${head}${ref} (${name})${tail}`;
  });
}

/** The names of a column's codes in the codes' order: "1 = coastal, 2 = inland", or ''. */
function namesList(column) {
  const m = namesOf(column);
  if (!m) return '';
  const order = (codesOf(column) || []).filter((k) => Object.prototype.hasOwnProperty.call(m, k));
  const rest = Object.keys(m).filter((k) => !order.includes(k));
  return [...order, ...rest].map((k) => `${k} = ${m[k]}`).join(', ');
}

/** The names of a column's codes in a sentence, as the report's choices say it. */
function namesSentence(column) {
  return `The codes of ${column} are named: ${namesList(column)}.`;
}

function copyNames(names) {
  return Object.fromEntries(Object.entries(names).map(([c, m]) => [c, { ...m }]));
}

function openNaming(column) {
  state.naming = { column, values: { ...(namesOf(column) || {}) }, problem: '' };
  renderColumns();
  const first = el.columnsTable.querySelector('tr.codes-editor input');
  if (first) first.focus();
}

function focusNamingButton(column) {
  const b = [...el.columnsTable.querySelectorAll('button.name-codes')].find((x) => x.dataset.column === column);
  if (b) b.focus();
}

function closeNaming() {
  const n = state.naming;
  state.naming = null;
  renderColumns();
  if (n) focusNamingButton(n.column);
}

/** The editor of the names of a column's codes, as a row under the column's row. */
function namingRow(body, column, codes) {
  const n = state.naming;
  const tr = body.insertRow();
  tr.className = 'codes-editor';
  tr.dataset.editor = column;
  const td = tr.insertCell();
  td.colSpan = el.columnsTable.tHead.rows[0].cells.length;
  const form = document.createElement('form');
  form.className = 'codes-form';
  form.noValidate = true;
  const title = document.createElement('p');
  title.className = 'codes-title';
  title.id = 'codes-title';
  const strong = document.createElement('strong');
  strong.textContent = `Names for the codes of ${column}`;
  title.append(strong, '. They are labels only: the model still uses the codes, and copies keep the codes. Leave a box empty for a code without a name.');
  form.setAttribute('aria-labelledby', title.id);
  const fields = document.createElement('div');
  fields.className = 'codes-fields';
  codes.forEach((code, i) => {
    const id = `code-name-${i + 1}`;
    const label = document.createElement('label');
    label.className = 'code-field';
    label.htmlFor = id;
    const c = document.createElement('span');
    c.className = 'code';
    c.textContent = code;
    const input = document.createElement('input');
    input.type = 'text';
    input.id = id;
    input.dataset.code = code;
    input.autocomplete = 'off';
    input.spellcheck = false;
    input.setAttribute('aria-label', `Name of code ${code} of ${column}`);
    input.value = Object.prototype.hasOwnProperty.call(n.values, code) ? n.values[code] : '';
    input.addEventListener('input', () => { n.values[code] = input.value; });
    label.append(c, input);
    fields.append(label);
  });
  const buttons = document.createElement('div');
  buttons.className = 'codes-buttons';
  const use = document.createElement('button');
  use.type = 'submit';
  use.className = 'use-names';
  use.textContent = 'Use these names';
  const cancel = document.createElement('button');
  cancel.type = 'button';
  cancel.className = 'cancel-names';
  cancel.textContent = 'Cancel';
  cancel.addEventListener('click', closeNaming);
  buttons.append(use, cancel);
  const problem = document.createElement('p');
  problem.className = 'message';
  problem.setAttribute('role', 'alert');
  problem.textContent = n.problem;
  problem.hidden = !n.problem;
  form.append(title, fields, buttons, problem);
  form.addEventListener('submit', (e) => {
    e.preventDefault();
    applyNaming();
  });
  form.addEventListener('keydown', (e) => {
    if (e.key === 'Escape') {
      e.preventDefault();
      closeNaming();
    }
  });
  td.append(form);
}

/** Checks the names typed and puts them in place (undoable), or says what is wrong and keeps them. */
function applyNaming() {
  const n = state.naming;
  if (!n) return;
  const codes = codesOf(n.column) || [];
  const names = {};
  const long = [];
  const seen = new Map();
  let twice = null;
  for (const code of codes) {
    const v = String(Object.prototype.hasOwnProperty.call(n.values, code) ? n.values[code] : '').replace(/\s+/g, ' ').trim();
    if (!v) continue;
    if ([...v].length > MAX_CODE_NAME) long.push(code);
    const key = v.toLowerCase();
    if (seen.has(key) && !twice) twice = [seen.get(key), code, v];
    else seen.set(key, code);
    names[code] = v;
  }
  let problem = '';
  let focusCode = null;
  if (long.length) {
    problem = `A name can have at most ${MAX_CODE_NAME} characters; the name of ${long.length === 1 ? 'code' : 'codes'} ${long.join(', ')} is longer. Shorten it; nothing has changed yet.`;
    [focusCode] = long;
  } else if (twice) {
    problem = `Each code needs a name of its own: codes ${twice[0]} and ${twice[1]} are both called "${twice[2]}". Change one of them; nothing has changed yet.`;
    [, focusCode] = twice;
  }
  if (problem) {
    n.problem = problem;
    renderColumns();
    const input = [...el.columnsTable.querySelectorAll('tr.codes-editor input')].find((x) => x.dataset.code === focusCode);
    if (input) input.focus();
    return;
  }
  const before = namesOf(n.column) || {};
  const same = Object.keys(before).length === Object.keys(names).length && Object.entries(names).every(([k, v]) => before[k] === v);
  if (same) {
    state.naming = null;
    renderColumns();
    setColumnsStatus(Object.keys(names).length ? `The codes of ${n.column} already have these names.` : `The codes of ${n.column} have no names.`);
    focusNamingButton(n.column);
    return;
  }
  changeLevelNames(n.column, names);
}

/** Gives the codes of a column these names (none: no names), keeping the names before for Undo. */
function changeLevelNames(column, names) {
  state.undo.push({ levelNames: copyNames(state.levelNames), column });
  if (state.undo.length > UNDO_DEPTH) state.undo.shift();
  if (Object.keys(names).length) state.levelNames[column] = { ...names };
  else delete state.levelNames[column];
  state.naming = null;
  el.undoButton.disabled = false;
  setColumnsStatus(namesOf(column)
    ? `${namesSentence(column)} Undo takes them back.`
    : `The codes of ${column} have no names now. Undo takes that back.`);
  renderColumns();
  relabel();
  focusNamingButton(column);
}

function undoNames(before) {
  state.levelNames = before.levelNames;
  state.naming = null;
  setColumnsStatus(namesOf(before.column)
    ? `Undone: ${namesSentence(before.column)}`
    : `Undone: the codes of ${before.column} have no names again.`);
  renderColumns();
  relabel();
}

/**
 * Shows again, with the names as they are now, what shows levels: the
 * result, the comparison, the one-case form and the predictions. Names are
 * labels only, so nothing becomes out of date.
 */
function relabel() {
  const notes = [el.staleNote, el.chooseStale, el.predictStale];
  const hidden = notes.map((x) => x.hidden);
  if (state.report) renderResult(state.report);
  if (state.selection) renderSelection(state.selection);
  if (state.inputs) renderCaseForm(state.inputs);
  if (state.prediction) renderPrediction(state.prediction);
  notes.forEach((x, i) => { x.hidden = hidden[i]; });
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
    else if (e.kind === 'stopped') showMessage(el.modelMessage, `The fit was stopped ${stoppedWords()}. Press Fit to run it again.`);
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
  showPredictFor();
  showKeepFor();
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
  state.equationSeq += 1;
  el.equationBlock.hidden = true;
  el.result.hidden = true;
  el.staleNote.hidden = true;
  clearChecks();
  clearPredict();
  el.keep.hidden = true;
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

/** A number as short as it reads well, without trailing zeros (for hints). */
function plainNumber(v, sig = 6) {
  if (typeof v !== 'number') return shortNumber(v, sig);
  const a = Math.abs(v);
  if (a !== 0 && (a < 1e-4 || a >= 1e12)) return v.toExponential(sig - 1).replace(/\.?0+e/, 'e');
  return String(Number(v.toPrecision(sig)));
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
    r.terms.length ? ` on ${r.terms.map(termText).join(', ')}` : ' on no terms',
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
    const th = addCell(tr, 'th', labelText(c.term), { scope: 'row' });
    th.dataset.term = c.term;
    if (c.group && c.group !== c.term) th.title = `from ${termText(c.group)}`;
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
      addCell(tr, 'th', labelText(c.term), { scope: 'row' }).dataset.term = c.term;
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
  el.namesCopyHint.hidden = !r.coefficients.some((c) => labelText(c.term) !== c.term);
  renderEquation(r);
}

/** The model in plain algebra, from the wasm (the report's equation), with the names of codes in its labels. */
async function renderEquation(r) {
  const seq = ++state.equationSeq;
  const fit = {
    response: r.response,
    coefficients: r.coefficients.map((c) => ({ term: labelText(c.term), estimate: c.estimate, aliased: c.aliased })),
  };
  let answer = null;
  try {
    // Not counted among the exports the tests wait for: it is part of showing the result.
    answer = await engine.exportCall('equation_text', [JSON.stringify(fit)]);
  } catch (_) {
    answer = null;
  }
  if (seq !== state.equationSeq || state.report !== r) return;
  if (!answer || answer.error) {
    el.equationBlock.hidden = true;
    return;
  }
  el.equation.textContent = answer.ok;
  const bracket = /\[[^\]]*\]/.exec(answer.ok);
  el.equationHint.textContent = `Coefficients rounded to 4 significant digits${bracket ? `; ${bracket[0]} is 1 for a row where it holds and 0 for the others` : ''}.`;
  el.equationBlock.hidden = false;
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
  if (terms.length) return terms.map(termText).join(', ');
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
      setSearching(false, state.stoppedBy === 'load' ? 'Stopped when a load was cancelled.' : 'Stopped.');
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
  state.stoppedBy = 'search';
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
  return `${verb} ${termText(step.term)} (${valueWord} = ${valueWord === 'p' ? pValueText(step.value) : shortNumber(step.value, 6)}); then: ${termsText(step.terms)}.`;
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
    const skipped = st.skipped
      ? ` ${st.skipped} other ${st.skipped === 1 ? 'resample was' : 'resamples were'} left out: in ${st.skipped === 1 ? 'it' : 'them'} some candidate had a single value or was a combination of others (a rare category not drawn, say).`
      : '';
    el.stabilityIntro.textContent = `How often each term was chosen when the search was repeated on ${st.resamples} resamples of the rows (seed ${st.seed}). `
      + `The recommended set itself was chosen in ${shareText(st.winner_share)} of them.${skipped}`;
    for (const t of st.terms) {
      const li = document.createElement('li');
      const name = document.createElement('span');
      name.className = 'bar-term';
      name.textContent = termText(t.term);
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

  const named = Object.keys(state.levelNames).filter((c) => namesOf(c) && r.candidates.some((t) => t.includes(quoteName(c))));
  el.comparisonNames.textContent = named.length ? `Names of codes (labels only; the sets use the codes): ${named.map((c) => `${c} ${namesList(c)}`).join('; ')}.` : '';
  el.comparisonNames.hidden = named.length === 0;

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
  state.check = null;
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
      ? `The checks were stopped ${stoppedWords()}. Press Check this model to run them again.`
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
  state.check = { report: answer.ok.check, request };
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
    canvas.dataset.title = fig.title;
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

// ---------------------------------------------------------------- predict

/** The file size check every picker and drop goes through. */
function tooBig(file) {
  if (file.size <= MAX_FILE_BYTES) return null;
  const grouped = (n) => String(n).replace(/\B(?=(\d{3})+(?!\d))/g, ',');
  const size = (n) => (n >= 1024 ** 3 ? `${(n / 1024 ** 3).toFixed(1)} GiB` : `${(n / 1024 ** 2).toFixed(1)} MiB`);
  let is = size(file.size);
  let limit = `${MAX_FILE_BYTES / 1024 ** 2} MiB`;
  if (is === size(MAX_FILE_BYTES)) {
    is = `${grouped(file.size)} bytes`;
    limit = `${limit} (${grouped(MAX_FILE_BYTES)} bytes)`;
  }
  return `"${file.name}" is ${is}, more than the ${limit} this page reads, so it was not opened. `
    + 'Save the columns you need, or fewer rows, to a smaller file and open that; the command-line tool reads larger files.';
}

/** After a fit: the Predict step for its model, with the form for one case. */
async function showPredictFor() {
  el.predict.hidden = false;
  if (state.prediction) el.predictStale.hidden = false;
  const seq = ++state.inputsSeq;
  state.inputs = null;
  el.caseButton.disabled = true;
  el.caseStatus.textContent = '';
  let answer;
  try {
    answer = await engine.modelInputs(state.data.bytes, state.fitRequest);
  } catch (e) {
    if (seq !== state.inputsSeq) return;
    el.caseFields.textContent = '';
    el.caseHint.textContent = `The form could not be made: ${e.message}`;
    return;
  }
  if (seq !== state.inputsSeq) return;
  if (answer.error) {
    el.caseFields.textContent = '';
    el.caseHint.textContent = `The form could not be made. ${answer.error}`;
    return;
  }
  state.inputs = answer.ok;
  renderCaseForm(answer.ok);
  renderFormulaCells(answer.ok);
}

/** Other data: the predictions, the new cases and the form's values go. */
function forgetPredictions() {
  state.prediction = null;
  state.newCases = null;
  state.caseValues.clear();
  state.predictSeq += 1;
  el.caseFields.textContent = '';
  el.predictResult.hidden = true;
  el.predictStale.hidden = true;
  el.casesStatus.textContent = '';
  el.caseStatus.textContent = '';
  renderCasesSheets();
  clearMessage(el.predictMessage);
}

function clearPredict() {
  state.inputsSeq += 1;
  state.inputs = null;
  el.predict.hidden = true;
}

/** The profile's summary of a column, for the hints of the form. */
function columnProfile(name) {
  return state.data ? state.data.inspection.columns.find((c) => c.name === name) : null;
}

function renderCaseForm(info) {
  // Keep what was typed, by column, before the form is made again.
  for (const f of el.caseFields.querySelectorAll('[data-column]')) state.caseValues.set(f.dataset.column, f.value);
  el.caseFields.textContent = '';
  el.caseButton.disabled = info.inputs.length === 0 && !(state.fitRequest && state.fitRequest.intercept);
  el.caseHint.textContent = info.inputs.length
    ? `One value for each column the model reads (${plural(info.inputs.length, 'column')}).`
    : 'The model reads no column: every case gets the same prediction.';
  info.inputs.forEach((input, i) => {
    const id = `case-input-${i + 1}`;
    const box = document.createElement('div');
    box.className = 'case-field';
    const label = document.createElement('label');
    label.htmlFor = id;
    label.className = 'case-label';
    label.textContent = input.column;
    const hint = document.createElement('span');
    hint.className = 'case-range';
    hint.id = `${id}-hint`;
    let control;
    if (input.kind === 'category') {
      control = document.createElement('select');
      control.add(new Option('Choose a category', ''));
      for (const level of input.levels) control.add(new Option(levelText(input.column, level), level));
      hint.textContent = `one of the ${input.levels.length} categories of the data${input.reference !== null ? `; the model compares them with ${levelText(input.column, input.reference)}` : ''}`;
    } else {
      control = document.createElement('input');
      if (input.kind === 'date') {
        control.type = 'date';
        hint.textContent = 'a date';
      } else {
        control.type = 'number';
        control.step = 'any';
        control.inputMode = 'decimal';
        const col = columnProfile(input.column);
        const sm = col && col.summary;
        hint.textContent = sm && typeof sm.min === 'number' && typeof sm.max === 'number'
          ? `a number; the data run from ${plainNumber(sm.min)} to ${plainNumber(sm.max)}`
          : 'a number';
      }
    }
    control.id = id;
    control.dataset.column = input.column;
    control.setAttribute('aria-describedby', hint.id);
    const kept = state.caseValues.get(input.column);
    if (kept !== undefined) {
      control.value = kept;
      // A level the new model does not have is not kept.
      if (control.value !== kept) control.value = '';
    }
    control.addEventListener('input', () => { state.caseValues.set(input.column, control.value); });
    box.append(label, control, hint);
    el.caseFields.append(box);
  });
}

/** A cell of tab-separated text, quoted when it must be. */
function tsvCell(text) {
  return /[\t\r\n"]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
}

/** The one-case form as a header and one row of tab-separated cells, or the problem. */
function caseCells() {
  const fields = [...el.caseFields.querySelectorAll('[data-column]')];
  const empty = [];
  const bad = [];
  for (const f of fields) {
    if (f.validity && f.validity.badInput) bad.push(f);
    else if (f.value.trim() === '') empty.push(f);
  }
  if (bad.length) {
    return { problem: `${bad.map((f) => f.dataset.column).join(', ')}: type a number, such as 12.5, with a point for the decimals.`, focus: bad[0] };
  }
  if (empty.length) {
    const names = empty.map((f) => f.dataset.column);
    return { problem: `Give a value for ${names.length === 1 ? names[0] : `each of ${names.join(', ')}`} first: the model needs every column it reads.`, focus: empty[0] };
  }
  if (!fields.length) return { text: 'case\n1\n', values: [] };
  const header = fields.map((f) => tsvCell(f.dataset.column)).join('\t');
  const row = fields.map((f) => tsvCell(f.value.trim())).join('\t');
  const values = fields.map((f) => ({ column: f.dataset.column, value: f.value.trim(), level: f.tagName === 'SELECT' }));
  return { text: `${header}\n${row}\n`, values };
}

async function predictCase() {
  if (!state.data || !state.fitRequest) return;
  const { text, problem, focus, values } = caseCells();
  if (problem) {
    showMessage(el.predictMessage, problem);
    if (focus) focus.focus();
    return;
  }
  await runPredict(new TextEncoder().encode(text), { paste: true, header_row: 1, decimal: 'point' }, { source: 'case', name: 'the case in the form', format: 'paste', values });
}

/**
 * Asks the wasm for predictions of new cases from the model in the Result.
 * @param {Uint8Array} newBytes
 * @param {object} read  how to read them: {paste?, sheet?, header_row?, decimal?}
 * @param {{source: string, name: string, format: string}} what
 */
async function runPredict(newBytes, read, what) {
  const seq = ++state.predictSeq;
  const status = what.source === 'case' ? el.caseStatus : el.casesStatus;
  clearMessage(el.predictMessage);
  el.caseButton.disabled = true;
  el.casesPasteButton.disabled = true;
  el.predict.setAttribute('aria-busy', 'true');
  status.textContent = 'Predicting…';
  const request = { ...state.fitRequest, new: read };
  let answer;
  try {
    answer = await engine.predict(state.data.bytes, newBytes, request);
  } catch (e) {
    if (seq !== state.predictSeq) return;
    finishPredict(status, '');
    showMessage(el.predictMessage, e instanceof EngineError && e.kind === 'stopped'
      ? `The prediction was stopped ${stoppedWords()}. Press Predict again to run it.`
      : `The predictions could not be made: ${e.message}`);
    return;
  }
  if (seq !== state.predictSeq) return;
  if (answer.error) {
    finishPredict(status, '');
    const where = what.source === 'case' ? '' : ` of "${what.name}"`;
    showMessage(el.predictMessage, `No predictions could be made${where}. ${answer.error.replace(/^Could not read the new cases:\s*/, 'The new cases could not be read: ')}`);
    return;
  }
  const r = answer.ok;
  const done = r.predictions.filter((p) => p.problem === null).length;
  finishPredict(status, what.source === 'case'
    ? (done ? 'Predicted.' : 'Not predicted: see the note in the table.')
    : `Predicted ${done} of ${plural(r.predictions.length, 'row')}.`);
  state.prediction = { report: r, ...what, request: state.fitRequest };
  renderPrediction(state.prediction);
}

function finishPredict(status, text) {
  state.predictsDone += 1;
  el.caseButton.disabled = false;
  el.casesPasteButton.disabled = false;
  el.predict.removeAttribute('aria-busy');
  status.textContent = text;
}

/** Reads a file of new cases: its sheets first (a workbook), then predicts. */
async function loadCases(file) {
  if (!file || !state.fitRequest) return;
  const big = tooBig(file);
  if (big) {
    showMessage(el.predictMessage, big);
    return;
  }
  let buf;
  try {
    buf = await file.arrayBuffer();
  } catch (e) {
    showMessage(el.predictMessage, `"${file.name}" could not be read from the disk: ${e.message}`);
    return;
  }
  await openCases(file.name, new Uint8Array(buf), {});
}

async function openCases(name, bytes, read) {
  clearMessage(el.predictMessage);
  el.casesStatus.textContent = 'Reading…';
  let answer;
  try {
    answer = await inspectBytes(bytes, read, null);
  } catch (e) {
    el.casesStatus.textContent = '';
    showMessage(el.predictMessage, e instanceof EngineError && e.kind === 'stopped'
      ? `Reading "${name}" was stopped ${stoppedWords()}; open it again to predict its cases.`
      : `"${name}" could not be opened: ${e.message}`);
    return;
  }
  if (answer.error) {
    el.casesStatus.textContent = '';
    showMessage(el.predictMessage, `"${name}" could not be opened: ${readError(answer.error)}`);
    return;
  }
  const load = answer.ok.load;
  state.newCases = { name, bytes, read: { ...read, ...(load.sheet !== null && read.sheet === undefined ? { sheet: load.sheet } : {}) }, load };
  renderCasesSheets();
  await predictCases();
}

function renderCasesSheets() {
  const c = state.newCases;
  const many = !!c && c.load.sheets.length > 1;
  el.casesSheetField.hidden = !many;
  el.casesSheet.textContent = '';
  if (many) {
    for (const s of c.load.sheets) el.casesSheet.add(new Option(s, s));
    el.casesSheet.value = c.read.sheet;
  }
}

async function predictCases() {
  const c = state.newCases;
  if (!c || !state.fitRequest) return;
  await runPredict(c.bytes, c.read, { source: 'cases', name: c.name, format: c.load.format });
}

async function predictPasted() {
  if (!state.fitRequest) return;
  const text = el.casesPaste.value;
  if (text.trim() === '') {
    showMessage(el.predictMessage, 'There are no pasted cells to predict: copy the new cases in a spreadsheet, with the column names in the first row, and paste them into the box first.');
    el.casesPaste.focus();
    return;
  }
  await openCases('Pasted new cases', new TextEncoder().encode(text), { paste: true });
}

const PREDICTION_COLUMNS = [
  ['estimate', 'Estimate', 6],
  ['ci_low', 'Mean: low', 6],
  ['ci_high', 'Mean: high', 6],
  ['pi_low', 'One case: low', 6],
  ['pi_high', 'One case: high', 6],
];

function renderPrediction(p) {
  const r = p.report;
  el.predictResult.hidden = false;
  el.predictStale.hidden = true;
  const lvl = percent(r.level);
  const original = r.back_transform ? r.original_scale : null;
  el.predictFacts.textContent = '';
  const strong = document.createElement('strong');
  strong.textContent = p.source === 'case' ? 'The case in the form' : p.name;
  const done = r.predictions.filter((x) => x.problem === null).length;
  const given = p.source === 'case' && p.values && p.values.length
    ? `: ${p.values.map((v) => `${v.column} = ${v.level ? levelText(v.column, v.value) : v.value}`).join(', ')}`
    : '';
  el.predictFacts.append(strong, p.source === 'case' ? given : `: ${done} of ${plural(r.predictions.length, 'row')} predicted`,
    `. Intervals at ${lvl}: "Mean" is the range for the average of cases like it, "One case" the range for a single case.`);
  if (r.back_transform) {
    el.predictFacts.append(` The model explains ${r.response}; the values on the scale of ${original} are back-transformed by ${r.back_transform}`,
      typeof r.smearing === 'number' ? ` (smearing factor ${shortNumber(r.smearing, 6)}).` : '.');
  }

  renderCaseSummary(p, original);

  const table = el.predictionsTable;
  const thead = table.tHead;
  thead.textContent = '';
  const top = thead.insertRow();
  const rowHead = p.source === 'case' ? 'Case' : ({ workbook: 'Sheet row', paste: 'Pasted row' }[p.format] || 'File row');
  addCell(top, 'th', rowHead, { scope: 'col', rowSpan: 2, className: 'rownum-head' });
  const scales = [[r.response, '']];
  if (r.back_transform) scales.unshift([original, 'orig']);
  for (const [name] of scales) {
    const th = addCell(top, 'th', `${name}${name === r.response && r.back_transform ? ' (the model\'s scale)' : ''}`, { scope: 'colgroup', colSpan: PREDICTION_COLUMNS.length, className: 'group' });
    th.title = name;
  }
  addCell(top, 'th', 'Leverage', { scope: 'col', rowSpan: 2, className: 'num' });
  addCell(top, 'th', 'Notes', { scope: 'col', rowSpan: 2 });
  const second = thead.insertRow();
  for (const [name] of scales) {
    for (const [, label] of PREDICTION_COLUMNS) {
      const th = addCell(second, 'th', label, { scope: 'col', className: 'num' });
      th.title = `${name}: ${label.toLowerCase()}${label === 'Estimate' ? '' : ` (${lvl})`}`;
    }
  }
  const body = table.tBodies[0];
  body.textContent = '';
  const shown = r.predictions.slice(0, PREDICTION_ROWS_SHOWN);
  for (const x of shown) {
    const tr = body.insertRow();
    addCell(tr, 'th', p.source === 'case' ? 'This case' : String(x.row), { scope: 'row', className: 'rownum' });
    if (x.problem !== null) {
      tr.className = 'problem';
      const td = addCell(tr, 'td', problemText(x.problem), { className: 'row-problem' });
      td.colSpan = PREDICTION_COLUMNS.length * scales.length + 2;
      continue;
    }
    for (const [, which] of scales) {
      const values = which === 'orig' ? x.original || {} : x;
      for (const [key, label] of PREDICTION_COLUMNS) {
        const sig = PREDICTION_COLUMNS.find((c) => c[0] === key)[2];
        numberCell(tr, values[key], sig, `${which === 'orig' ? original : r.response}: ${label}`);
      }
    }
    numberCell(tr, x.leverage, 3, 'Leverage');
    const note = tr.insertCell();
    note.className = 'row-note';
    if (x.extrapolation) {
      tr.className = 'extrapolation';
      const mark = document.createElement('strong');
      mark.className = 'extra-mark';
      mark.textContent = 'outside the data';
      note.append(mark);
      // The reasons, in words, on a line of their own under the numbers.
      const why = body.insertRow();
      why.className = 'reason-row';
      const td = addCell(why, 'td', `${p.source === 'case' ? 'This case' : `${rowHead} ${x.row}`} is outside the data: ${x.extrapolation_reasons.join('; ')}.`, { className: 'reasons' });
      td.colSpan = PREDICTION_COLUMNS.length * scales.length + 3;
    } else {
      note.textContent = 'within the data';
    }
  }
  if (r.predictions.length > shown.length) {
    const tr = body.insertRow();
    const td = addCell(tr, 'td', `The first ${shown.length} of ${r.predictions.length} rows are listed; Copy predictions copies all of them.`, { className: 'more' });
    td.colSpan = PREDICTION_COLUMNS.length * scales.length + 3;
  }

  el.predictNotes.textContent = '';
  for (const n of r.notes) addItem(el.predictNotes, n);
  el.predictNotesBlock.hidden = r.notes.length === 0;
  el.predictCautions.textContent = '';
  for (const c of r.cautions) addItem(el.predictCautions, c);
  el.copyPredictionsStatus.textContent = '';
}

/** A row's reason for no prediction, with the names of the codes it lists beside them. */
function problemText(text) {
  const m = /^(Row \d+ has "(.*)" in "(.*)", a value the model never saw \(it knows )(.*)(\); it cannot be predicted\.)$/.exec(text);
  if (!m || !namesOf(m[3])) return text;
  return `${m[1]}${m[4].split(', ').map((k) => levelText(m[3], k)).join(', ')}${m[5]}`;
}

/** The one case's prediction in a sentence, on the scale the user knows. */
function renderCaseSummary(p, original) {
  const box = $('case-summary');
  box.textContent = '';
  box.hidden = p.source !== 'case';
  if (box.hidden) return;
  const x = p.report.predictions[0];
  if (!x || x.problem !== null) {
    box.textContent = x ? problemText(x.problem) : 'The case could not be predicted.';
    return;
  }
  const v = original && x.original ? x.original : x;
  const name = original || p.report.response;
  const big = document.createElement('span');
  big.className = 'big';
  big.textContent = shortNumber(v.estimate, 5);
  big.title = `${name}: ${full(v.estimate)}`;
  box.append(`${name}: `, big, `. For the average of cases like this one, ${shortNumber(v.ci_low, 5)} to ${shortNumber(v.ci_high, 5)}; `
    + `for this one case, ${shortNumber(v.pi_low, 5)} to ${shortNumber(v.pi_high, 5)} (${percent(p.report.level)} intervals).`);
  if (x.extrapolation) box.append(` It lies outside the data: ${x.extrapolation_reasons.join('; ')}, so this is an extrapolation and may be far off.`);
}

// ------------------------------------------------------------- take it with you

/** Calls an export of the wasm in the worker; resolves with its `ok`, or throws an Error in plain words. */
async function exportCall(fn, args) {
  let answer;
  try {
    answer = await engine.exportCall(fn, args);
  } finally {
    state.exportsDone += 1;
  }
  if (answer.error) throw new Error(answer.error);
  return answer.ok;
}

/** After a fit: the step with the formula, the files and the session. */
function showKeepFor() {
  el.keep.hidden = false;
  clearMessage(el.keepMessage);
  el.filesStatus.textContent = '';
  el.sessionStatus.textContent = '';
  if (state.formula && state.formula.request !== state.fitRequest) {
    el.formulaStatus.textContent = 'The formula below is of an earlier model; press Write the formula to update it.';
  }
  const load = state.data.inspection.load;
  if (!el.formulaRow.value || el.formulaRow.dataset.auto === 'yes') {
    el.formulaRow.value = String(load.header_row + 1);
    el.formulaRow.dataset.auto = 'yes';
  }
}

/** Spreadsheet column letters of a 0-based column position (0 → A, 26 → AA). */
function columnLetters(i) {
  let n = i + 1;
  let out = '';
  while (n > 0) {
    const r = (n - 1) % 26;
    out = String.fromCharCode(65 + r) + out;
    n = Math.floor((n - 1) / 26);
  }
  return out;
}

function renderFormulaCells(info) {
  for (const f of el.formulaCells.querySelectorAll('input[data-column]')) state.cellLetters.set(f.dataset.column, f.value);
  el.formulaCells.textContent = '';
  const header = state.data.inspection.preview.header;
  info.inputs.forEach((input, i) => {
    const id = `formula-cell-${i + 1}`;
    const label = document.createElement('label');
    label.className = 'formula-cell';
    label.htmlFor = id;
    const name = document.createElement('span');
    name.className = 'case-label';
    name.textContent = input.column;
    const box = document.createElement('input');
    box.type = 'text';
    box.id = id;
    box.className = 'letters';
    box.autocomplete = 'off';
    box.spellcheck = false;
    box.dataset.column = input.column;
    box.setAttribute('aria-label', `Sheet column of ${input.column}`);
    const at = header.indexOf(input.column);
    box.value = state.cellLetters.get(input.column) ?? (at >= 0 ? columnLetters(at) : '');
    label.append(name, box);
    el.formulaCells.append(label);
  });
}

async function writeFormula() {
  if (!state.fitRequest) return;
  const cells = {};
  for (const f of el.formulaCells.querySelectorAll('input[data-column]')) {
    const v = f.value.trim().toUpperCase();
    if (v) cells[f.dataset.column] = v;
    state.cellLetters.set(f.dataset.column, f.value);
  }
  const rowText = el.formulaRow.value.trim();
  if (!/^\d+$/.test(rowText) || Number(rowText) < 1) {
    showMessage(el.keepMessage, `The first row must be a whole number, 1 or more, not "${el.formulaRow.value}".`);
    el.formulaRow.focus();
    return;
  }
  const request = {
    ...state.fitRequest,
    cells,
    first_row: Number(rowText),
    separator: el.formulaSeparator.value,
    decimal_comma: el.formulaComma.checked,
  };
  clearMessage(el.keepMessage);
  el.formulaButton.disabled = true;
  el.formulaStatus.textContent = 'Writing…';
  const fitRequest = state.fitRequest;
  try {
    const f = await exportCall('formula_bytes', [state.data.bytes, JSON.stringify(request)]);
    state.formula = { ...f, request: fitRequest };
    el.formulaText.value = f.formula;
    el.formulaFirst.textContent = String(request.first_row);
    el.formulaNotes.textContent = '';
    for (const n of f.notes) addItem(el.formulaNotes, n);
    el.formulaOut.hidden = false;
    el.formulaCopyStatus.textContent = '';
    el.formulaStatus.textContent = f.scale === 'response' ? 'Written: it gives the prediction of the response itself.' : 'Written: it gives the prediction of the transformed response the model explains.';
  } catch (e) {
    el.formulaStatus.textContent = '';
    showMessage(el.keepMessage, `The formula could not be written. ${e.message}`);
  } finally {
    el.formulaButton.disabled = false;
  }
}

/** The user's clock, as the files record it: 2026-12-02 10:30. */
function localDate() {
  const d = new Date();
  const two = (n) => String(n).padStart(2, '0');
  return `${d.getFullYear()}-${two(d.getMonth() + 1)}-${two(d.getDate())} ${two(d.getHours())}:${two(d.getMinutes())}`;
}

/** The data's name without its extension, fit for a file name. */
function baseName() {
  const name = state.data ? state.data.fileName : 'plumbline';
  return name.replace(/\.[A-Za-z0-9]{1,5}$/, '').replace(/[^\p{L}\p{N}._-]+/gu, '-').replace(/^-+|-+$/g, '') || 'plumbline';
}

/** Offers bytes or text as a download (a blob: URL inside the page, never the network). */
function download(name, type, content) {
  const url = URL.createObjectURL(new Blob([content], { type }));
  const a = document.createElement('a');
  a.href = url;
  a.download = name;
  a.hidden = true;
  document.body.append(a);
  a.click();
  a.remove();
  setTimeout(() => URL.revokeObjectURL(url), 60000);
}

/** The SHA-256 of the data's bytes, from the wasm, once per data. */
async function dataFingerprint() {
  const d = state.data;
  if (!d.sha256) d.sha256 = await exportCall('sha256_hex', [d.bytes]);
  return d.sha256;
}

/** The choices made on this page, in plain words, for the report. */
async function choicesInWords() {
  const d = state.data;
  const out = [];
  for (const [column, kind] of Object.entries(d.kinds)) {
    out.push(`"${column}" was set by you to ${KIND_WORDS[kind] || kind} (the data suggested ${KIND_WORDS[d.detected[column]] || d.detected[column]}).`);
  }
  for (const column of namedColumns()) out.push(namesSentence(column));
  for (const c of await exportCall('model_choices', [JSON.stringify(state.fitRequest)])) out.push(c);
  if (state.fitRequest.hc3) out.push('HC3 robust standard errors were asked for as well.');
  if (!el.staleNote.hidden) out.push('The choices on the page changed after this fit; the files hold the fit shown.');
  if (state.selection && !el.chooseStale.hidden) out.push('The comparison of candidates was run before the last changes of the choices.');
  return out;
}

/** Everything the workbook and the report are made of: what the page shows. */
async function buildBundle() {
  const d = state.data;
  const load = d.inspection.load;
  const current = (x) => x && x.request === state.fitRequest;
  const plots = [];
  if (current(state.check)) {
    for (const canvas of el.plots.querySelectorAll('canvas')) {
      const url = canvas.toDataURL('image/png');
      plots.push({ title: canvas.dataset.title || canvas.dataset.figure, png_base64: url.slice(url.indexOf(',') + 1) });
    }
  }
  return {
    source: { file_name: d.fileName, sha256: await dataFingerprint(), sheet: load.sheet, header_row: load.header_row },
    choices: await choicesInWords(),
    fit: state.report,
    check: current(state.check) ? state.check.report : null,
    select: state.selection,
    predict: current(state.prediction) ? state.prediction.report : null,
    formula: current(state.formula) ? state.formula.formula : null,
    plots,
    date: localDate(),
  };
}

async function downloadFile(kind) {
  if (!state.report) return;
  const button = kind === 'workbook' ? el.workbookButton : el.reportButton;
  clearMessage(el.keepMessage);
  button.disabled = true;
  el.filesStatus.textContent = kind === 'workbook' ? 'Making the workbook…' : 'Making the report…';
  try {
    const bundle = JSON.stringify(await buildBundle());
    if (kind === 'workbook') {
      const b64 = await exportCall('export_workbook', [bundle]);
      const name = `${baseName()}-results.xlsx`;
      download(name, 'application/vnd.openxmlformats-officedocument.spreadsheetml.sheet', base64ToBytes(b64));
      el.filesStatus.textContent = `Saved ${name}.`;
    } else {
      const html = await exportCall('export_report', [bundle]);
      const name = `${baseName()}-report.html`;
      download(name, 'text/html', html);
      el.filesStatus.textContent = `Saved ${name}.`;
    }
  } catch (e) {
    el.filesStatus.textContent = '';
    showMessage(el.keepMessage, `The ${kind === 'workbook' ? 'workbook' : 'report'} could not be made. ${e.message}`);
  } finally {
    button.disabled = false;
  }
}

/** The columns of the data whose codes have names, in the data's order. */
function namedColumns() {
  return state.data ? state.data.inspection.preview.header.filter((c) => namesOf(c)) : [];
}

/** The columns the user has left out of the model by calling them identifiers. */
function excludedColumns() {
  return state.data ? Object.entries(state.data.kinds).filter(([, k]) => k === 'identifier').map(([c]) => c) : [];
}

/** The choices on the page, as a session file records them. */
function sessionRequest() {
  const d = state.data;
  const built = buildRequest();
  const model = built.request ? {
    response: built.request.response,
    terms: built.request.terms,
    intercept: built.request.intercept,
    weights: null,
    exclude_rows: [...state.excluded],
    level: built.request.level,
    hc3: built.request.hc3,
  } : null;
  const stability = el.stability.checked && /^\d+$/.test(el.resamples.value.trim()) ? Number(el.resamples.value.trim()) : null;
  return {
    file_name: d.fileName,
    ...readRequest(d),
    saved: localDate(),
    kinds: { ...d.kinds },
    level_names: Object.fromEntries(namedColumns().map((c) => [c, { ...namesOf(c) }])),
    excluded_columns: excludedColumns(),
    model,
    selection: { candidates: el.candidates.value, force: el.force.value, by: el.chooseBy.value, search: el.searchWay.value, folds: 5, seed: 1, stability },
    include_data: el.sessionData.checked,
  };
}

async function saveSession() {
  if (!state.data) return;
  clearMessage(el.keepMessage);
  el.sessionSave.disabled = true;
  el.sessionStatus.textContent = 'Saving…';
  try {
    const text = await exportCall('session_save', [state.data.bytes, JSON.stringify(sessionRequest())]);
    const name = `${baseName()}-session.json`;
    download(name, 'application/json', text);
    el.sessionStatus.textContent = `Saved ${name}${el.sessionData.checked ? ', with a copy of the data' : ''}.`;
  } catch (e) {
    el.sessionStatus.textContent = '';
    showMessage(el.keepMessage, `The session could not be saved. ${e.message}`);
  } finally {
    el.sessionSave.disabled = false;
  }
}

/** A response term as the page's two controls hold it, or null when they cannot. */
function responseControls(text) {
  const m = /^(log|sqrt)\((.*)\)$/.exec(text.trim());
  const transform = m ? m[1] : '';
  let inner = (m ? m[2] : text).trim();
  if (/^"(?:[^"]|"")*"$/.test(inner)) inner = inner.slice(1, -1).replace(/""/g, '"');
  else if (!/^[\p{Alphabetic}_][\p{Alphabetic}\p{N}_.]*$/u.test(inner)) return null;
  return { column: inner, transform };
}

/** Puts a session's choices into the page's controls; says what it could not. */
function applyChoices(session) {
  const notes = [];
  const m = session.model;
  if (m) {
    const r = responseControls(m.response);
    const names = state.data.inspection.preview.header;
    if (!r) notes.push(`The session's response, ${m.response}, is not a column, its log or its square root, which is what this page can choose; choose the response yourself.`);
    else if (!names.includes(r.column)) notes.push(`The session's response column "${r.column}" is not in these data.`);
    else {
      el.responseColumn.value = r.column;
      el.responseTransform.value = r.transform;
    }
    el.terms.value = m.terms;
    el.intercept.checked = m.intercept;
    el.level.value = String(Number((m.level * 100).toPrecision(12)));
    el.hc3.checked = m.hc3;
    state.excluded = [...m.exclude_rows];
    state.excludedUndo = [];
    renderExcluded();
    if (m.weights) notes.push(`The session weights the rows by "${m.weights}"; this page fits without weights.`);
    updateResponsePreview();
  }
  const s = session.selection;
  if (s) {
    el.candidates.value = s.candidates;
    state.candidatesEdited = true;
    el.force.value = s.force;
    if ([...el.chooseBy.options].some((o) => o.value === s.by)) el.chooseBy.value = s.by;
    if ([...el.searchWay.options].some((o) => o.value === s.search)) el.searchWay.value = s.search;
    el.stability.checked = s.stability !== null;
    if (s.stability !== null) el.resamples.value = String(s.stability);
  }
  const names = state.data.inspection.preview.header;
  state.levelNames = {};
  state.naming = null;
  const absent = [];
  for (const [column, m] of Object.entries(session.level_names || {})) {
    if (!names.includes(column)) absent.push(column);
    else if (m && Object.keys(m).length) state.levelNames[column] = Object.fromEntries(Object.entries(m).map(([k, v]) => [k, String(v)]));
  }
  if (absent.length) notes.push(`The session names the codes of ${absent.map((c) => `"${c}"`).join(', ')}, which these data do not have; those names are not used.`);
  renderColumns();
  return notes;
}

function showSessionNotes(lines) {
  el.sessionNotes.textContent = '';
  for (const l of lines) addItem(el.sessionNotes, l);
  el.sessionBlock.hidden = lines.length === 0;
}

async function openSession(file) {
  if (!file) return;
  clearMessage(el.dataMessage);
  showSessionNotes([]);
  try {
    await openSessionFile(file);
  } finally {
    state.sessionsOpened += 1;
  }
}

async function openSessionFile(file) {
  const text = await pickedContents(file, (f) => f.text());
  if (text === null) return;
  let opened;
  try {
    opened = await exportCall('session_open', [text, state.data ? state.data.bytes : new Uint8Array(0)]);
  } catch (e) {
    showMessage(el.dataMessage, `The session "${file.name}" could not be opened: ${e.message}${keptNote()}`);
    return;
  }
  const { session, mismatches, blocking } = opened;
  const src = session.source;
  const read = {};
  if (src.paste) read.paste = true;
  if (src.sheet !== null) read.sheet = src.sheet;
  if (src.header_row !== null) read.header_row = src.header_row;
  if (opened.data_base64) {
    const ok = await loadBytes(`${src.file_name} (from the session)`, base64ToBytes(opened.data_base64), { paste: src.paste, fileName: src.file_name });
    if (!ok) return;
  }
  const d = state.data;
  const now = d.read;
  if ((read.sheet !== undefined && read.sheet !== d.inspection.load.sheet) || (read.header_row !== undefined && read.header_row !== d.inspection.load.header_row)) {
    if (!(await reinspect({ read: { ...now, ...read } }))) return;
  }
  // The columns the session leaves out are identifiers here (the page's way to leave a column out).
  const kinds = { ...session.kinds };
  const header = state.data.inspection.preview.header;
  for (const c of session.excluded_columns || []) {
    if (header.includes(c) && kinds[c] === undefined && state.data.detected[c] !== 'identifier') kinds[c] = 'identifier';
  }
  const missingExcluded = (session.excluded_columns || []).filter((c) => !header.includes(c));
  if (Object.keys(kinds).length || Object.keys(state.data.kinds).length) {
    if (!(await reinspect({ kinds }))) return;
  }
  const notes = [`Opened the session "${file.name}"${session.saved ? `, saved ${session.saved}` : ''}${opened.data_base64 ? ', with the copy of the data it keeps' : ''}.`];
  for (const mm of mismatches) notes.push(mm.message);
  if (missingExcluded.length) notes.push(`The session leaves out ${missingExcluded.map((c) => `"${c}"`).join(', ')}, which these data do not have.`);
  notes.push(...applyChoices(session));
  if (blocking) {
    clearResult();
    notes.push('Its model cannot be fitted to these data, so it was not fitted; the choices that fit these data are in place.');
    showSessionNotes(notes);
    return;
  }
  showSessionNotes(notes);
  if (session.model) await runFit();
}

async function copyTsv(what, result, button, status, count) {
  if (!result) return;
  status.textContent = '';
  let text;
  try {
    text = await exportCall('export_tsv', [what, JSON.stringify(result)]);
  } catch (e) {
    status.textContent = `Could not copy: ${e.message}`;
    return;
  }
  const done = await copyText(text, button);
  if (done) state.copied = text;
  status.textContent = done ? `Copied ${plural(count, 'row')}, tab-separated, with every digit.` : 'The browser did not allow copying.';
}

// ------------------------------------------------------------------ copy

/**
 * Puts text on the clipboard; where the browser does not allow that, a
 * hidden text box is selected and copied instead. Resolves with true when
 * the text was copied.
 */
async function copyText(text, button) {
  try {
    if (navigator.clipboard && navigator.clipboard.writeText) {
      await navigator.clipboard.writeText(text);
      return true;
    }
  } catch (_) {
    // Not allowed here (a file:// page in some browsers): the fallback below.
  }
  const ta = document.createElement('textarea');
  ta.value = text;
  ta.setAttribute('readonly', '');
  ta.setAttribute('aria-hidden', 'true');
  ta.tabIndex = -1;
  ta.className = 'offscreen';
  document.body.append(ta);
  ta.select();
  let done = false;
  try { done = document.execCommand('copy'); } catch (_) { done = false; }
  ta.remove();
  if (button) button.focus();
  return done;
}

function copyTable() {
  if (!state.report) return Promise.resolve();
  return copyTsv('coefficients', state.report, el.copyButton, el.copyStatus, state.report.coefficients.length);
}

function copyPredictions() {
  if (!state.prediction) return Promise.resolve();
  return copyTsv('predictions', state.prediction.report, el.copyPredictions, el.copyPredictionsStatus, state.prediction.report.predictions.length);
}

function copyCandidates() {
  if (!state.selection) return Promise.resolve();
  return copyTsv('candidates', state.selection, el.copyCandidates, el.copyCandidatesStatus, state.selection.comparison.length);
}

// ---------------------------------------------------------------- wiring

el.fileInput.addEventListener('change', () => {
  const f = el.fileInput.files && el.fileInput.files[0];
  loadFile(f).finally(() => { el.fileInput.value = ''; });
});
el.demoButton.addEventListener('click', () => { openDemo(); });
el.loadCancel.addEventListener('click', cancelLoad);
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
el.caseForm.addEventListener('submit', (e) => {
  e.preventDefault();
  if (!el.caseButton.disabled) predictCase();
});
el.casesFile.addEventListener('change', () => {
  const f = el.casesFile.files && el.casesFile.files[0];
  loadCases(f).finally(() => { el.casesFile.value = ''; });
});
el.casesPasteButton.addEventListener('click', () => { predictPasted(); });
el.casesSheet.addEventListener('change', () => {
  if (!state.newCases) return;
  state.newCases.read = { ...state.newCases.read, sheet: el.casesSheet.value };
  predictCases();
});
el.copyPredictions.addEventListener('click', () => { copyPredictions(); });
el.copyCandidates.addEventListener('click', () => { copyCandidates(); });
el.formulaForm.addEventListener('submit', (e) => {
  e.preventDefault();
  if (!el.formulaButton.disabled) writeFormula();
});
el.formulaRow.addEventListener('input', () => { el.formulaRow.dataset.auto = 'no'; });
el.formulaCopy.addEventListener('click', async () => {
  if (!state.formula) return;
  const done = await copyText(el.formulaText.value, el.formulaCopy);
  if (done) state.copied = el.formulaText.value;
  el.formulaCopyStatus.textContent = done ? 'Copied the formula, with every digit of the coefficients.' : 'The browser did not allow copying; select the formula and copy it yourself.';
});
el.workbookButton.addEventListener('click', () => { downloadFile('workbook'); });
el.reportButton.addEventListener('click', () => { downloadFile('report'); });
el.sessionSave.addEventListener('click', () => { saveSession(); });
el.sessionFile.addEventListener('change', () => {
  const f = el.sessionFile.files && el.sessionFile.files[0];
  openSession(f).finally(() => { el.sessionFile.value = ''; });
});

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
  /** True once the prediction form of the latest fit is made (false while it is being made). */
  caseFormReady() {
    return state.inputs !== null;
  },
  /** How many fits started from the page have been answered. */
  fitsDone() {
    return state.fitsDone;
  },
  /** How many inspections started from the page have been answered. */
  inspectsDone() {
    return state.inspectsDone;
  },
  /** The largest file the page reads, in bytes. */
  maxFileBytes() {
    return MAX_FILE_BYTES;
  },
  /** How many predictions started from the page have been answered. */
  predictsDone() {
    return state.predictsDone;
  },
  /** How many exports (formula, copies, files, sessions) have been answered. */
  exportsDone() {
    return state.exportsDone;
  },
  /** How many session files have been dealt with, opened or refused. */
  sessionsOpened() {
    return state.sessionsOpened;
  },
  /** The wasm's prediction through the worker, as the page asks for it. */
  predict(dataText, newText, request) {
    const enc = new TextEncoder();
    return engine.predict(enc.encode(dataText), enc.encode(newText), request);
  },
  /** Resolves with the error the page got when the wasm panicked for real. */
  realPanic() {
    return engine.realPanicForTest().then(() => null, (e) => ({ name: e.name, kind: e.kind, message: e.message }));
  },
  /** The text last put on the clipboard by a Copy button. */
  copiedText() {
    return state.copied;
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
