/** The message area (data-testid="error"): errors, warnings and notes, one per source. */
import { formatProblem, type Problem } from '../../errors.js';
import { clear, h } from '../dom.js';

export interface Message {
  kind: 'error' | 'warning' | 'info';
  title: string;
  detail?: string;
  problems?: Problem[];
}

export interface MessagesView {
  el: HTMLElement;
  set(source: string, m: Message | null): void;
}

export function buildMessages(): MessagesView {
  const el = h('div', { class: 'messages', 'data-testid': 'error', role: 'alert', 'aria-live': 'assertive', hidden: true });
  const entries = new Map<string, Message>();
  const render = () => {
    clear(el);
    el.hidden = entries.size === 0;
    for (const [source, m] of entries) {
      const close = h('button', { type: 'button', class: 'close', 'aria-label': 'Dismiss this message', onclick: () => set(source, null) }, '×');
      el.append(
        h(
          'div',
          { class: `message ${m.kind}`, 'data-kind': m.kind, 'data-source': source },
          h('div', { class: 'message-head' }, h('strong', null, m.kind === 'error' ? 'Error: ' : m.kind === 'warning' ? 'Warning: ' : 'Note: '), h('span', null, m.title), close),
          m.detail ? h('p', null, m.detail) : null,
          m.problems?.length ? h('ul', null, m.problems.map((p) => h('li', null, formatProblem(p)))) : null,
        ),
      );
    }
  };
  const set = (source: string, m: Message | null) => {
    if (m) entries.set(source, m);
    else entries.delete(source);
    render();
  };
  return { el, set };
}
