/** A tiny DOM builder and form controls (no framework). */
type Child = Node | string | number | null | undefined | false;
type Attrs = Record<string, unknown>;

export function h<K extends keyof HTMLElementTagNameMap>(tag: K, attrs?: Attrs | null, ...children: (Child | Child[])[]): HTMLElementTagNameMap[K] {
  const el = document.createElement(tag);
  if (attrs) {
    for (const [k, v] of Object.entries(attrs)) {
      if (v === undefined || v === null || v === false) continue;
      if (k.startsWith('on') && typeof v === 'function') el.addEventListener(k.slice(2), v as EventListener);
      else if (k === 'class') el.className = String(v);
      else if (k === 'text') el.textContent = String(v);
      else if (k === 'value' || k === 'checked' || k === 'disabled' || k === 'selected' || k === 'hidden') (el as unknown as Record<string, unknown>)[k] = v;
      else el.setAttribute(k, v === true ? '' : String(v));
    }
  }
  append(el, children);
  return el;
}

export function append(el: HTMLElement, children: (Child | Child[])[]): void {
  for (const c of children.flat()) {
    if (c === null || c === undefined || c === false) continue;
    el.append(typeof c === 'number' ? String(c) : c);
  }
}

export function clear(el: HTMLElement): void {
  while (el.firstChild) el.firstChild.remove();
}

let uid = 0;
export function newId(prefix: string): string {
  return `${prefix}-${++uid}`;
}

/** A number shown as in the CLI: 4 significant digits, exponent form for very small or large. */
export function fmt(x: number | null | undefined, digits = 4): string {
  if (x === null || x === undefined) return '—';
  if (x === 0) return '0';
  return Math.abs(x) >= 1e-3 && Math.abs(x) < 1e5 ? Number(x.toPrecision(digits)).toString() : x.toExponential(digits - 1);
}

export interface NumberControl {
  el: HTMLElement;
  input: HTMLInputElement;
  set(v: number): void;
}

/**
 * A slider with a number box beside it. Invalid typed values are marked and not applied (the
 * message says what is allowed); the slider only produces valid values.
 */
export function sliderField(o: {
  label: string;
  min: number;
  max: number;
  step: number;
  value: number;
  unit?: string;
  help?: string;
  testid?: string;
  integer?: boolean;
  /** Show the unit only in the tooltip (compact toolbars). */
  compact?: boolean;
  /**
   * Call onChange only when a drag settles (the slider's change event, on release or a key
   * press); while dragging, onInput sees each value. For settings that start a computation.
   */
  settle?: boolean;
  onInput?: (v: number) => void;
  onChange: (v: number) => void;
}): NumberControl {
  const id = newId('f');
  const range = h('input', { type: 'range', min: o.min, max: o.max, step: o.step, value: String(o.value), 'aria-label': `${o.label} (slider)` });
  const num = h('input', { type: 'number', id, min: o.min, max: o.max, step: 'any', value: String(o.value), class: 'num', 'data-testid': o.testid });
  const msg = h('div', { class: 'field-msg', role: 'status' });
  const apply = (v: number, from: 'range' | 'num') => {
    if (from === 'range') num.value = String(v);
    else range.value = String(v);
    o.onChange(v);
  };
  range.addEventListener('input', () => {
    if (!o.settle) apply(Number(range.value), 'range');
    else {
      num.value = range.value;
      o.onInput?.(Number(range.value));
    }
  });
  if (o.settle) range.addEventListener('change', () => apply(Number(range.value), 'range'));
  num.addEventListener('change', () => {
    const v = Number(num.value);
    const ok = num.value.trim() !== '' && Number.isFinite(v) && v >= o.min && v <= o.max && (!o.integer || Number.isInteger(v));
    num.setAttribute('aria-invalid', String(!ok));
    msg.textContent = ok ? '' : `${o.label}: give ${o.integer ? 'a whole number' : 'a number'} from ${o.min} to ${o.max}${o.unit ?? ''}.`;
    if (ok) apply(v, 'num');
  });
  const el = h(
    'div',
    { class: 'field slider-field', title: [o.help, o.compact && o.unit ? `Unit: ${o.unit}.` : ''].filter(Boolean).join(' ') || undefined },
    h('label', { for: id }, o.label, o.unit && !o.compact ? h('span', { class: 'unit' }, ` (${o.unit})`) : null),
    h('div', { class: 'slider-row' }, range, num),
    msg,
  );
  return {
    el,
    input: num,
    set(v: number) {
      range.value = String(v);
      num.value = String(v);
      num.removeAttribute('aria-invalid');
      msg.textContent = '';
    },
  };
}

export function checkbox(label: string, checked: boolean, onChange: (v: boolean) => void, testid?: string): { el: HTMLElement; input: HTMLInputElement } {
  const input = h('input', { type: 'checkbox', checked, 'data-testid': testid });
  input.addEventListener('change', () => onChange(input.checked));
  return { el: h('label', { class: 'check' }, input, ' ', label), input };
}

export function select<T extends string>(label: string, options: { value: T; label: string }[], value: T, onChange: (v: T) => void, testid?: string): { el: HTMLElement; input: HTMLSelectElement } {
  const id = newId('s');
  const input = h('select', { id, 'data-testid': testid }, options.map((o) => h('option', { value: o.value, selected: o.value === value }, o.label)));
  input.addEventListener('change', () => onChange(input.value as T));
  return { el: h('div', { class: 'field' }, h('label', { for: id }, label), input), input };
}

export function section(title: string, ...children: (Child | Child[])[]): HTMLElement {
  return h('section', { class: 'panel' }, h('h2', null, title), ...children);
}
