/** The run panel's progress bar (an ARIA progressbar) and the message under it. */
import { el } from './dom.ts';

export interface Progress {
  bar: HTMLElement;
  track: HTMLElement;
  msg: HTMLElement;
  set(fraction: number, text: string): void;
}

/** The run's progress bar and its message line. */
export function progressBar(): Progress {
  const bar = el('div', { class: 'progress-fill', id: 'run-progress-fill' });
  const track = el(
    'div',
    {
      class: 'progress',
      id: 'run-progress',
      role: 'progressbar',
      'aria-valuemin': '0',
      'aria-valuemax': '100',
      'aria-valuenow': '0',
      'aria-label': 'run progress',
    },
    bar,
  );
  const msg = el('p', { class: 'run-message', id: 'run-message', 'aria-live': 'polite' }, 'No run yet.');
  return {
    bar,
    track,
    msg,
    set(fraction, text) {
      const pct = Math.round(Math.max(0, Math.min(1, fraction)) * 100);
      bar.style.width = `${pct}%`;
      track.setAttribute('aria-valuenow', String(pct));
      msg.textContent = `${pct}% — ${text}`;
    },
  };
}
