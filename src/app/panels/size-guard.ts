/**
 * The size guard (data-testid="size-guard"): before a large run it shows the estimate of
 * src/flex/estimate.ts (time, memory, solver) and waits for Run or Not now.
 */
import type { RunEstimate } from '../../flex/estimate.js';
import { formatBytes } from '../../linalg/dense.js';
import { h } from '../dom.js';

export interface SizeGuard {
  el: HTMLElement;
  /** Shows the estimate; `onConfirm` runs on Run, `onCancel` on Not now. */
  ask(what: string, e: RunEstimate, onConfirm: () => void, onCancel: () => void): void;
  hide(): void;
  readonly open: boolean;
}

/** Rough seconds in words; the estimate is good to a factor of 2–3, so no decimals. */
export function roughTime(s: number): string {
  if (s < 2) return 'a second or two';
  if (s < 60) return `about ${Math.round(s)} s`;
  if (s < 3600) return `about ${Math.round(s / 60)} min`;
  return `about ${(s / 3600).toFixed(1)} h`;
}

export function estimateText(e: RunEstimate): string {
  return `${e.joints.toLocaleString('en')} joints, about ${e.bars.toLocaleString('en')} bars; the ${e.solver} solver (${e.path}); ${roughTime(e.seconds)} and ${formatBytes(e.bytes)} of memory before classifying (a rough estimate).`;
}

export function buildSizeGuard(): SizeGuard {
  const title = h('strong');
  const body = h('p');
  let confirm: () => void = () => {};
  let cancel: () => void = () => {};
  const yes = h('button', { type: 'button', class: 'primary small', 'data-testid': 'size-guard-confirm', onclick: () => (hide(), confirm()) }, 'Run it');
  const no = h('button', { type: 'button', class: 'small', 'data-testid': 'size-guard-cancel', onclick: () => (hide(), cancel()) }, 'Not now');
  const el = h('div', { class: 'size-guard', 'data-testid': 'size-guard', role: 'alertdialog', 'aria-label': 'Confirm a large run', hidden: true }, title, body, h('div', { class: 'row' }, yes, no));
  const hide = () => {
    el.hidden = true;
  };
  return {
    el,
    ask(what, e, onConfirm, onCancel) {
      confirm = onConfirm;
      cancel = onCancel;
      title.textContent = `${what} ${e.cells[0]}×${e.cells[1]} cells, a large run. Run it?`;
      body.textContent = estimateText(e);
      el.hidden = false;
    },
    hide,
    get open() {
      return !el.hidden;
    },
  };
}
