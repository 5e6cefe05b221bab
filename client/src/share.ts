/**
 * The share panel: save the page state as a project (a read-only view link and a private edit link) or, with an
 * edit link, as a new revision; and the map as a PNG carrying its legend lines and the caution.
 */
import { ApiError, sendJson } from './api.ts';
import { message, type AppContext } from './context.ts';
import { el, errorBox, replace } from './dom.ts';
import { download, mapPng } from './export.ts';
import { legendLine } from './legend.ts';
import { stateToJson } from './state.ts';

export interface SharePanel {
  root: HTMLElement;
  setTitle(title: string): void;
}

function linkRow(label: string, href: string, id: string): HTMLElement {
  const input = el('input', { id, readonly: '', value: href, class: 'link' });
  const copy = el('button', { type: 'button' }, 'Copy');
  copy.addEventListener('click', () => {
    input.select();
    void navigator.clipboard?.writeText(href).catch(() => undefined);
  });
  return el('div', { class: 'field-row link-row' }, el('label', { for: id }, label), input, copy);
}

/** Saves the state: a new revision of the open project (edit link), else a new project; returns what to show. */
async function save(ctx: AppContext): Promise<HTMLElement[]> {
  const { state, projectId, editToken } = ctx;
  if (projectId !== null && editToken !== null) {
    const r = await sendJson<{ revision: number }>(
      'PUT',
      `/api/projects/${encodeURIComponent(projectId)}`,
      { state: stateToJson(state) },
      { authorization: `Bearer ${decodeURIComponent(editToken)}` },
    );
    return [
      el('p', { class: 'ok', role: 'status' }, `Saved revision ${r.revision}.`),
      linkRow('View link', `${window.location.origin}/?project=${encodeURIComponent(projectId)}`, 'share-view-url'),
    ];
  }
  const r = await sendJson<{ id: string; editToken: string; viewUrl?: string; editUrl?: string }>('POST', '/api/projects', {
    title: state.title,
    state: stateToJson(state),
  });
  const abs = (u: string | undefined, fallback: string) => new URL(u ?? fallback, window.location.origin).href;
  const view = abs(r.viewUrl, `/?project=${encodeURIComponent(r.id)}`);
  const edit = abs(r.editUrl, `/?project=${encodeURIComponent(r.id)}#edit=${encodeURIComponent(r.editToken)}`);
  return [
    el('p', { class: 'ok', role: 'status' }, `Saved as project ${r.id}.`),
    linkRow('View link (read-only)', view, 'share-view-url'),
    linkRow('Edit link (keep it private)', edit, 'share-edit-url'),
    el('p', { class: 'note' }, 'The edit link carries its key after “#”, which browsers never send to a server; anyone holding it can save new revisions.'),
  ];
}

/** The PNG export: the map with one legend line per visible layer and the caution. */
async function exportPng(ctx: AppContext): Promise<void> {
  const { map, app, layerPanel, cfg, state } = ctx;
  const lines = layerPanel.visibleEntries().map((e) => {
    const runLayer = app.run?.run.layers?.find((l) =>
      e.layers.some((id) => (map.getLayer(id)?.metadata as { runLayer?: string } | undefined)?.runLayer === l.name),
    );
    return runLayer ? legendLine(runLayer.title, runLayer.legend, runLayer.units) : e.label;
  });
  const blob = await mapPng(map, [`Layers: ${lines.join(' · ')}`], cfg.caution, `${state.title} — subtherm ${cfg.version}`);
  download(blob, 'subtherm-map.png');
}

export function sharePanel(ctx: AppContext): SharePanel {
  const out = el('div', { id: 'share-out', 'aria-live': 'polite' });
  const titleInput = el('input', { id: 'share-title', value: ctx.state.title, maxlength: '200' });
  titleInput.addEventListener('input', () => {
    ctx.state.title = titleInput.value;
    ctx.syncUrl();
  });
  const shareBtn = el(
    'button',
    { type: 'button', id: 'share-button', class: 'primary' },
    ctx.projectId !== null && ctx.editToken !== null ? 'Save a new revision' : 'Save and share',
  );
  const onShare = async (): Promise<void> => {
    const c = ctx.map.getCenter();
    ctx.state.view = { center: [c.lng, c.lat], zoom: ctx.map.getZoom() };
    replace(out, el('p', { class: 'loading' }, 'Saving…'));
    try {
      replace(out, ...(await save(ctx)));
    } catch (e) {
      replace(out, e instanceof ApiError ? errorBox(`Share: ${e.message}`, e.details) : errorBox(`Share: ${message(e)}`));
    }
  };
  shareBtn.addEventListener('click', () => void onShare());
  const pngBtn = el('button', { type: 'button', id: 'export-png' }, 'Map as PNG');
  pngBtn.addEventListener('click', () => {
    exportPng(ctx).catch((e: unknown) => ctx.showError(`PNG export: ${message(e)}`));
  });
  if (ctx.readOnly) {
    shareBtn.disabled = true;
    titleInput.disabled = true;
  }
  const root = el(
    'div',
    {},
    el('h3', {}, 'Share'),
    el('div', { class: 'field-row' }, el('label', { for: titleInput.id }, 'Title'), titleInput),
    el('div', { class: 'button-row' }, shareBtn),
    out,
    el('p', { class: 'note' }, 'The address bar always holds a link to this view (zoom, centre, layers and parameters).'),
    el('h3', {}, 'Export'),
    el('div', { class: 'button-row' }, pngBtn),
    el('p', { class: 'note' }, 'Each computed layer offers GeoTIFF, GeoJSON or CSV downloads in the layer list; every export carries the caution.'),
  );
  return {
    root,
    setTitle(title: string) {
      titleInput.value = title;
    },
  };
}
