/**
 * The thermal-model editor: surface values and the layer table, units in the headers, validated as you type with
 * the same schema the server uses (shared/schema/model.ts); each problem is shown beside its field.
 * A cell takes a number, or a distribution as JSON (e.g. {"dist":"normal","mean":3,"sd":0.3}); empty = absent.
 * The model's name is editable: it travels into the run's reports and exports.
 */
import { isInputError } from '../../shared/errors.ts';
import { parseThermalModel, type ThermalModelInput } from '../../shared/schema/model.ts';
import { el } from './dom.ts';

/** The layer table's columns: key, full name (for labels and tooltips), units, the header's short form and width in px.
 * The name has a row of its own above its layer's numbers, the panel's full width, so a long name stays readable. */
const COLUMNS: { key: string; label: string; units: string; head: string; widthPx?: number }[] = [
  { key: 'name', label: 'Layer', units: '', head: 'Layer' },
  { key: 'bottomKm', label: 'Bottom', units: 'km', head: 'Bottom', widthPx: 44 },
  { key: 'conductivityWmK', label: 'k₀', units: 'W/m/K', head: 'k₀', widthPx: 44 },
  { key: 'conductivityTempCoeffPerK', label: 'b in k₀/(1+bT)', units: '1/K', head: 'b', widthPx: 50 },
  { key: 'heatProductionUWm3', label: 'Heat production', units: 'µW/m³', head: 'Heat prod.', widthPx: 44 },
  { key: 'heatProductionDecayKm', label: 'Decay depth', units: 'km', head: 'Decay depth', widthPx: 42 },
  { key: 'densityKgM3', label: 'Density', units: 'kg/m³', head: 'Density', widthPx: 50 },
];
/** Width of the column of remove buttons, px. */
const REMOVE_COLUMN_PX = 28;

function toText(v: unknown): string {
  if (v === undefined || v === null) return '';
  if (typeof v === 'number' || typeof v === 'string') return String(v);
  return JSON.stringify(v);
}

/** A cell's text as a model value: empty → absent, a number, a JSON distribution, or the raw text (then invalid). */
function fromText(s: string, key: string): unknown {
  const t = s.trim();
  if (t === '') return undefined;
  if (key === 'name') return s;
  if (t.startsWith('{')) {
    try {
      return JSON.parse(t);
    } catch {
      return t;
    }
  }
  const n = Number(t);
  return t !== '' && Number.isFinite(n) ? n : t;
}

export interface ModelEditor {
  root: HTMLElement;
  /** The current model when valid, else null. */
  value(): ThermalModelInput | null;
  set(model: ThermalModelInput): void;
  setEnabled(on: boolean): void;
}

interface Fields {
  name: HTMLTextAreaElement;
  surfaceT: HTMLInputElement;
  surfaceQ: HTMLInputElement;
  errT: HTMLElement;
  errQ: HTMLElement;
  /** The layer table: one tbody per layer (its name row, then its values row). */
  table: HTMLTableElement;
}

/** A cell's field: a text input, or for the layer's name a one-line text area that wraps (a long name stays readable). */
type CellField = HTMLInputElement | HTMLTextAreaElement;

/** Each layer's fields in COLUMNS order (its name first). */
function rowInputs(table: HTMLTableElement): CellField[][] {
  return [...table.tBodies].map((tb) => [...tb.querySelectorAll('input, textarea')] as CellField[]);
}

/** The model the fields describe (unknown keys of the loaded model and its layers carried through). */
function buildModel(f: Fields, top: Record<string, unknown>, extras: Record<string, unknown>[]): Record<string, unknown> {
  const layers = rowInputs(f.table).map((inputs, i) => {
    const l: Record<string, unknown> = { ...(extras[i] ?? {}) };
    COLUMNS.forEach((c, j) => {
      const v = fromText(inputs[j].value, c.key);
      if (v === undefined) delete l[c.key];
      else l[c.key] = v;
    });
    return l;
  });
  const m: Record<string, unknown> = { ...top, layers };
  const put = (key: string, v: unknown) => {
    if (v === undefined) delete m[key];
    else m[key] = v;
  };
  put('name', f.name.value.trim() === '' ? undefined : f.name.value.trim());
  put('surfaceTemperatureC', fromText(f.surfaceT.value, 'surfaceTemperatureC'));
  put('surfaceHeatFlowMWm2', fromText(f.surfaceQ.value, 'surfaceHeatFlowMWm2'));
  return m;
}

/** Marks each problem beside its field; returns how many had no field to sit beside. */
function placeProblems(f: Fields, details: readonly { feature?: unknown; field?: unknown; problem: string }[]): number {
  let unplaced = 0;
  for (const d of details) {
    const m = /^layers\[(\d+)\]/.exec(String(d.feature ?? ''));
    const field = String(d.field ?? '').split(/[.,\s]/)[0];
    let target: { input: CellField; err: Element } | null = null;
    if (m) {
      const j = COLUMNS.findIndex((c) => c.key === field);
      const inputs = rowInputs(f.table)[Number(m[1])];
      if (inputs) {
        const input = inputs[j >= 0 ? j : 0];
        target = { input, err: input.parentElement!.querySelector('.field-error')! };
      }
    } else if (field === 'surfaceTemperatureC') target = { input: f.surfaceT, err: f.errT };
    else if (field === 'surfaceHeatFlowMWm2') target = { input: f.surfaceQ, err: f.errQ };
    if (target) {
      target.input.setAttribute('aria-invalid', 'true');
      target.err.textContent = target.err.textContent ? `${target.err.textContent}; ${d.problem}` : d.problem;
    } else unplaced++;
  }
  return unplaced;
}

function layout(f: Fields, addBtn: HTMLButtonElement, status: HTMLElement): HTMLElement {
  return el(
    'div',
    { id: 'model-editor' },
    el('div', { class: 'field-row' }, el('label', { for: f.name.id }, 'Model name'), f.name),
    el('div', { class: 'field-row' }, el('label', { for: f.surfaceT.id }, 'Surface temperature (°C)'), el('span', { class: 'cell' }, f.surfaceT, f.errT)),
    el(
      'div',
      { class: 'field-row' },
      el('label', { for: f.surfaceQ.id }, 'Surface heat flow where no grid (mW/m²)'),
      el('span', { class: 'cell' }, f.surfaceQ, f.errQ),
    ),
    el('div', { class: 'table-scroll' }, f.table),
    el('div', { class: 'field-row' }, addBtn),
    status,
    el(
      'p',
      { class: 'note' },
      'A cell takes a number or a distribution as JSON, e.g. {"dist":"normal","mean":3,"sd":0.3}. The name travels into reports and exports.',
    ),
  );
}

/** The layer table's column widths and headers of the values (short name, units below, the full name as the tooltip). */
function layerTableHead(): DocumentFragment {
  const values = COLUMNS.filter((c) => c.key !== 'name');
  const cols = el('colgroup', {}, ...values.map((c) => el('col', c.widthPx ? { style: `width:${c.widthPx}px` } : {})));
  cols.append(el('col', { style: `width:${REMOVE_COLUMN_PX}px` }));
  const heads = values.map((c) => {
    const title = `${c.label}${c.units ? ` (${c.units})` : ''}`;
    return el('th', { scope: 'col', title }, c.head, c.units ? el('br') : null, c.units ? el('span', { class: 'unit' }, c.units) : null);
  });
  const frag = document.createDocumentFragment();
  frag.append(cols, el('thead', {}, el('tr', {}, ...heads, el('th', {}, ''))));
  return frag;
}

/** One editable layer of the layer table: its name across the table, then its values and the remove button. */
function layerRow(layer: Record<string, unknown>, i: number, enabled: boolean, onInput: () => void, onRemove: () => void): HTMLTableSectionElement {
  const nameRow = el('tr', { class: 'name-row' });
  const tr = el('tr', {});
  COLUMNS.forEach((c) => {
    const attrs = { 'aria-label': `layer ${i + 1} ${c.label}${c.units ? ` (${c.units})` : ''}`, 'data-field': c.key };
    const input: CellField = c.key === 'name' ? el('textarea', { ...attrs, class: 'text name-cell', rows: '1' }) : el('input', { ...attrs, class: 'num' });
    input.value = toText(layer[c.key]);
    // The whole value as the tooltip too (a distribution's JSON is longer than its cell).
    const tip = () => (input.title = input.value);
    tip();
    input.disabled = !enabled;
    input.addEventListener('input', () => (tip(), onInput()));
    // A name is one line: Enter does not break it (the text area only wraps it to fit the panel).
    if (c.key === 'name') input.addEventListener('keydown', (e) => (e as KeyboardEvent).key === 'Enter' && e.preventDefault());
    const cell = el('td', c.key === 'name' ? { colspan: String(COLUMNS.length) } : {}, input, el('span', { class: 'field-error' }));
    (c.key === 'name' ? nameRow : tr).append(cell);
  });
  const del = el('button', { type: 'button', class: 'icon', 'aria-label': `remove layer ${i + 1}`, title: 'remove layer' }, '×');
  del.disabled = !enabled;
  del.addEventListener('click', onRemove);
  tr.append(el('td', {}, del));
  return el('tbody', { class: 'layer-rows' }, nameRow, tr);
}

/** Validates the model the fields describe with the server's schema: its problems beside their fields, a status line;
 * the model when valid, else null. */
function checkFields(f: Fields, model: Record<string, unknown>, status: HTMLElement): ThermalModelInput | null {
  for (const e of document.querySelectorAll('#model-editor .field-error')) e.textContent = '';
  for (const i of document.querySelectorAll('#model-editor [aria-invalid]')) i.removeAttribute('aria-invalid');
  try {
    const m = parseThermalModel(model, 'model');
    status.textContent = `Valid: ${m.layers.length} layer${m.layers.length === 1 ? '' : 's'} to ${m.layers[m.layers.length - 1].bottomKm} km.`;
    status.className = 'model-status ok-text';
    return m;
  } catch (e) {
    if (!isInputError(e)) throw e;
    const unplaced = placeProblems(f, e.details);
    status.textContent = `${e.details.length} problem${e.details.length === 1 ? '' : 's'}${unplaced > 0 ? `: ${e.message}` : ' — see the marked fields.'}`;
    status.className = 'model-status error-text';
    return null;
  }
}

/** A new layer 10 km below the table's last (or 0–10 km), with middle-crust values to edit. */
function nextLayer(rows: CellField[][]): Record<string, unknown> {
  const last = rows.length > 0 ? Number(rows[rows.length - 1][1].value) : 0;
  return {
    name: `layer ${rows.length + 1}`,
    bottomKm: Number.isFinite(last) ? last + 10 : 10,
    conductivityWmK: 2.5,
    heatProductionUWm3: 0.5,
    densityKgM3: 2900,
  };
}

export function modelEditor(initial: ThermalModelInput, onValid: (m: ThermalModelInput | null) => void): ModelEditor {
  let extras: Record<string, unknown>[] = [];
  let top: Record<string, unknown> = {};
  let current: ThermalModelInput | null = null;
  let enabled = true;
  const f: Fields = {
    name: el('textarea', { id: 'model-name', class: 'text name-cell', maxlength: '200', rows: '1' }),
    surfaceT: el('input', { id: 'model-surfaceTemperatureC', class: 'num', inputmode: 'decimal', 'aria-describedby': 'err-model-surfaceTemperatureC' }),
    surfaceQ: el('input', { id: 'model-surfaceHeatFlowMWm2', class: 'num', inputmode: 'decimal', 'aria-describedby': 'err-model-surfaceHeatFlowMWm2' }),
    errT: el('span', { class: 'field-error', id: 'err-model-surfaceTemperatureC' }),
    errQ: el('span', { class: 'field-error', id: 'err-model-surfaceHeatFlowMWm2' }),
    table: el('table', { class: 'model-table fit' }),
  };
  f.table.append(layerTableHead());
  const status = el('p', { class: 'model-status', id: 'model-status', 'aria-live': 'polite' });
  const addBtn = el('button', { type: 'button', id: 'model-add-layer' }, 'Add layer');

  const validate = () => {
    current = checkFields(f, buildModel(f, top, extras), status);
    onValid(current);
  };

  const addRow = (layer: Record<string, unknown>) => {
    const tr = layerRow(layer, f.table.tBodies.length, enabled, validate, () => {
      extras.splice([...f.table.tBodies].indexOf(tr), 1);
      tr.remove();
      validate();
    });
    f.table.append(tr);
  };

  const set = (model: ThermalModelInput) => {
    const { layers, surfaceTemperatureC, surfaceHeatFlowMWm2, name, ...rest } = model as ThermalModelInput & Record<string, unknown>;
    top = rest;
    f.name.value = name ?? '';
    f.surfaceT.value = toText(surfaceTemperatureC);
    f.surfaceQ.value = toText(surfaceHeatFlowMWm2);
    extras = layers.map((l) => Object.fromEntries(Object.entries(l).filter(([k]) => !COLUMNS.some((c) => c.key === k))));
    for (const tb of [...f.table.tBodies]) tb.remove();
    for (const l of layers) addRow(l);
    validate();
  };

  addBtn.addEventListener('click', () => {
    extras.push({});
    addRow(nextLayer(rowInputs(f.table)));
    validate();
  });
  for (const i of [f.name, f.surfaceT, f.surfaceQ]) i.addEventListener('input', validate);
  f.name.addEventListener('keydown', (e) => e.key === 'Enter' && e.preventDefault());

  const root = layout(f, addBtn, status);
  set(initial);
  return {
    root,
    value: () => current,
    set,
    setEnabled(on: boolean) {
      enabled = on;
      for (const i of root.querySelectorAll('input, textarea, button')) (i as HTMLInputElement).disabled = !on;
    },
  };
}
