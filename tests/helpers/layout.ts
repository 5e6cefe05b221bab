// Layout checks on the page: what a panel hides past its edge.
import type { Page } from 'playwright-core';

/** Something drawn past its panel's edge, text wider than its table cell, or text cut inside its input box. */
export interface Overflow {
  what: string;
  text: string;
  overPx: number;
}

/**
 * Everything inside `root` (a CSS selector) that is cut at the panel's edge: elements whose right edge lies past the
 * panel's content box with no sideways scrolling container between them and the panel, and table cells whose
 * content is wider than the cell, and editable fields whose text does not fit in them (a name cut inside its box:
 * the field's scroll width over its client width, or a wrapping text area taller inside than its box; read-only fields
 * such as a link to copy are left out). Also each table's width over its container's (a table that scrolls sideways).
 */
export async function hiddenOverflow(p: Page, root: string): Promise<{ cut: Overflow[]; tables: { id: string; overPx: number }[] }> {
  return p.evaluate((sel) => {
    const panel = document.querySelector(sel) as HTMLElement;
    const edge = panel.getBoundingClientRect().left + panel.clientLeft + panel.clientWidth;
    const name = (e: Element) => `${e.tagName.toLowerCase()}${e.id ? `#${e.id}` : ''}${e.classList.length > 0 ? `.${[...e.classList].join('.')}` : ''}`;
    const scrolls = (e: Element) => {
      const s = getComputedStyle(e).overflowX;
      return (s === 'auto' || s === 'scroll') && e.scrollWidth > e.clientWidth;
    };
    const cut: { what: string; text: string; overPx: number }[] = [];
    for (const e of panel.querySelectorAll('*')) {
      const r = e.getBoundingClientRect();
      if (r.width === 0 || r.height === 0) continue;
      let scroller = false;
      for (let a = e.parentElement; a && a !== panel; a = a.parentElement) if (scrolls(a)) scroller = true;
      if (!scroller && r.right > edge + 0.5) cut.push({ what: name(e), text: (e.textContent ?? '').slice(0, 60), overPx: Math.round(r.right - edge) });
      if ((e.tagName === 'TD' || e.tagName === 'TH') && e.scrollWidth > e.clientWidth + 1)
        cut.push({ what: name(e), text: (e.textContent ?? '').slice(0, 60), overPx: e.scrollWidth - e.clientWidth });
      const field = e as HTMLInputElement | HTMLTextAreaElement;
      const editable = (e.tagName === 'INPUT' && ['text', 'number', 'search', ''].includes(e.getAttribute('type') ?? '')) || e.tagName === 'TEXTAREA';
      if (editable && !field.readOnly && field.value !== '') {
        const over = Math.max(e.scrollWidth - e.clientWidth, e.tagName === 'TEXTAREA' ? e.scrollHeight - e.clientHeight : 0);
        if (over > 1) cut.push({ what: `${name(e)} (text cut in its box)`, text: field.value.slice(0, 60), overPx: over });
      }
    }
    const tables = [...panel.querySelectorAll('table')]
      .filter((t) => t.getBoundingClientRect().width > 0)
      .map((t) => ({ id: t.id || name(t), overPx: Math.round(t.getBoundingClientRect().width - t.parentElement!.clientWidth) }));
    return { cut, tables };
  }, root);
}
