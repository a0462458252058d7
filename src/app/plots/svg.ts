/**
 * SVG markup as strings: escaping, elements, and a whole document for export. Pure functions
 * (no DOM), so the plots can be built and tested in Node and written to a file unchanged.
 */

/** Text or an attribute value made safe inside SVG/XML (& < > " '). */
export function esc(text: string): string {
  return text.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;').replace(/'/g, '&#39;');
}

/** A coordinate with at most two decimals ("12.5", not "12.500000001"). */
export function num(x: number): string {
  const r = Math.round(x * 100) / 100;
  return String(r === 0 ? 0 : r);
}

export type AttrValue = string | number | null | undefined | false;

/** One element; attributes that are null, undefined or false are left out; numbers go through num(). */
export function el(name: string, attrs: Record<string, AttrValue> = {}, children: string | string[] = ''): string {
  let a = '';
  for (const [k, v] of Object.entries(attrs)) {
    if (v === null || v === undefined || v === false) continue;
    a += ` ${k}="${typeof v === 'number' ? num(v) : esc(v)}"`;
  }
  const inner = Array.isArray(children) ? children.join('') : children;
  return inner === '' ? `<${name}${a}/>` : `<${name}${a}>${inner}</${name}>`;
}

/** A text element; the content is escaped. */
export function text(x: number, y: number, content: string, attrs: Record<string, AttrValue> = {}): string {
  return el('text', { x, y, ...attrs }, esc(content));
}

export const FONT = 'system-ui, -apple-system, "Segoe UI", Helvetica, Arial, sans-serif';

export interface SvgDocument {
  width: number;
  height: number;
  /** <title>: what a reader of the file sees first. */
  title: string;
  description?: string;
  /** A background colour, or null for a transparent figure. */
  background: string | null;
  body: string[];
  /** Include the XML declaration (for a file; leave it out inside an HTML page). */
  prolog?: boolean;
  /** Extra attributes of the root element (e.g. a class or data-testid when shown in the page). */
  attrs?: Record<string, AttrValue>;
}

/** A standalone SVG document (width/height in px, viewBox the same). */
export function svgDocument(d: SvgDocument): string {
  const root = el(
    'svg',
    { xmlns: 'http://www.w3.org/2000/svg', width: d.width, height: d.height, viewBox: `0 0 ${num(d.width)} ${num(d.height)}`, 'font-family': FONT, ...d.attrs },
    [
      el('title', {}, esc(d.title)),
      d.description ? el('desc', {}, esc(d.description)) : '',
      d.background ? el('rect', { x: 0, y: 0, width: d.width, height: d.height, fill: d.background }) : '',
      ...d.body,
    ],
  );
  return (d.prolog ? '<?xml version="1.0" encoding="UTF-8"?>\n' : '') + root + (d.prolog ? '\n' : '');
}
