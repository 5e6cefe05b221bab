/** DOM and SVG helpers. User strings only ever become text nodes or attribute values, never HTML. */

export function el<K extends keyof HTMLElementTagNameMap>(
  tag: K,
  attrs: Record<string, string> = {},
  ...children: (Node | string | null | undefined)[]
): HTMLElementTagNameMap[K] {
  const e = document.createElement(tag);
  for (const [k, v] of Object.entries(attrs)) e.setAttribute(k, v);
  for (const c of children) if (c !== null && c !== undefined) e.append(typeof c === 'string' ? document.createTextNode(c) : c);
  return e;
}

const SVG_NS = 'http://www.w3.org/2000/svg';

export function svg<K extends keyof SVGElementTagNameMap>(
  tag: K,
  attrs: Record<string, string | number> = {},
  ...children: (Node | string)[]
): SVGElementTagNameMap[K] {
  const e = document.createElementNS(SVG_NS, tag);
  for (const [k, v] of Object.entries(attrs)) e.setAttribute(k, String(v));
  for (const c of children) e.append(typeof c === 'string' ? document.createTextNode(c) : c);
  return e;
}

/** Replaces an element's children. */
export function replace(parent: Element, ...children: (Node | string | null | undefined)[]): void {
  parent.replaceChildren(...children.filter((c): c is Node | string => c !== null && c !== undefined));
}

/** A number as text with a fixed number of decimals; "—" when it is missing (0 is a real value). */
export function fmt(v: unknown, digits = 1): string {
  return typeof v === 'number' && Number.isFinite(v) ? v.toFixed(digits) : '—';
}

/** An error message box (role alert) with the server's text, and a table of its details when it has any. */
export function errorBox(message: string, details: { feature?: number | string; field?: string; problem: string }[] = []): HTMLElement {
  const box = el('div', { class: 'error', role: 'alert' }, el('p', { class: 'error-message' }, message));
  if (details.length > 0) box.append(problemTable(details));
  return box;
}

/** One column of a report table: its header (with an optional tooltip), its share of the width and each row's cell. */
export interface Column<R> {
  label: string;
  title?: string;
  /** Right-aligned tabular figures. */
  num?: boolean;
  /** Width of the column as CSS (e.g. '18%'); columns without one share what is left. */
  width?: string;
  cell: (row: R) => Node | string;
}

/**
 * A report table over the full width of its panel: fixed layout, long words wrapping, so no column is cut at the
 * panel's edge; wrapped in a container that scrolls sideways (visibly) if the panel is ever narrower than the words.
 */
export function reportTable<R>(
  attrs: Record<string, string>,
  columns: Column<R>[],
  rows: R[],
  rowAttrs: (row: R) => Record<string, string> = () => ({}),
): HTMLElement {
  const head = columns.map((c) => el('th', { scope: 'col', ...(c.title ? { title: c.title } : {}) }, c.label));
  const cols = columns.map((c) => el('col', c.width ? { style: `width:${c.width}` } : {}));
  const body = rows.map((r) => el('tr', rowAttrs(r), ...columns.map((c) => el('td', c.num ? { class: 'num' } : {}, c.cell(r)))));
  const cls = ['report', 'fit', attrs.class ?? ''].join(' ').trim();
  const table = el('table', { ...attrs, class: cls }, el('colgroup', {}, ...cols), el('thead', {}, el('tr', {}, ...head)), el('tbody', {}, ...body));
  return el('div', { class: 'table-scroll' }, table);
}

/** A validation report as a table: feature, field, problem. */
export function problemTable(details: { feature?: number | string; field?: string; problem: string }[], limit = 200): HTMLTableElement {
  const rows = details
    .slice(0, limit)
    .map((d) => el('tr', {}, el('td', {}, d.feature === undefined ? '—' : String(d.feature)), el('td', {}, d.field ?? '—'), el('td', {}, d.problem)));
  const t = el(
    'table',
    { class: 'report fit' },
    el('thead', {}, el('tr', {}, el('th', { scope: 'col' }, 'Feature'), el('th', { scope: 'col' }, 'Field'), el('th', { scope: 'col' }, 'Problem'))),
    el('tbody', {}, ...rows),
  );
  if (details.length > limit) t.append(el('caption', {}, `first ${limit} of ${details.length} problems`));
  return t;
}

/** Evenly spaced "nice" ticks covering [min, max] (1, 2, 5 × 10ⁿ steps). */
export function niceTicks(min: number, max: number, count = 5): number[] {
  const span = max - min;
  if (!(span > 0)) return [min];
  const raw = span / count;
  const mag = 10 ** Math.floor(Math.log10(raw));
  const step = [1, 2, 5, 10].map((m) => m * mag).find((s) => s >= raw) ?? 10 * mag;
  const out: number[] = [];
  for (let v = Math.ceil(min / step) * step; v <= max + step * 1e-9; v += step) out.push(Math.round(v / step) * step);
  return out;
}
