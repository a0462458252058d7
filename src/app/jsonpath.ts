/**
 * Finds where a problem's `where` (a JSON path such as `bars[3].shift[0]`, or `line L, column C`)
 * lies in the JSON text, so the editor can select it. A tolerant scanner: it records the span of
 * every value it reads and stops quietly at the first syntax error.
 */
export type Span = [number, number];

export function pathKey(segments: (string | number)[]): string {
  return segments.map((s, i) => (typeof s === 'number' ? `[${s}]` : i === 0 ? s : `.${s}`)).join('');
}

export function valueSpans(text: string): Map<string, Span> {
  const spans = new Map<string, Span>();
  let i = 0;
  const ws = () => {
    while (i < text.length && /\s/.test(text[i])) i++;
  };
  const fail = (): never => {
    throw new Error('stop');
  };
  const str = (): string => {
    if (text[i] !== '"') fail();
    let out = '';
    i++;
    while (i < text.length && text[i] !== '"') {
      if (text[i] === '\\') {
        out += text[i + 1] ?? '';
        i += 2;
      } else out += text[i++];
    }
    if (text[i] !== '"') fail();
    i++;
    return out;
  };
  const value = (path: (string | number)[]): void => {
    ws();
    const start = i;
    const c = text[i];
    if (c === '{') {
      i++;
      ws();
      if (text[i] === '}') i++;
      else {
        for (;;) {
          ws();
          const key = str();
          ws();
          if (text[i] !== ':') fail();
          i++;
          value([...path, key]);
          ws();
          if (text[i] === ',') i++;
          else if (text[i] === '}') {
            i++;
            break;
          } else fail();
        }
      }
    } else if (c === '[') {
      i++;
      ws();
      if (text[i] === ']') i++;
      else {
        for (let k = 0; ; k++) {
          value([...path, k]);
          ws();
          if (text[i] === ',') i++;
          else if (text[i] === ']') {
            i++;
            break;
          } else fail();
        }
      }
    } else if (c === '"') str();
    else {
      const m = /^(-?\d+(\.\d+)?([eE][+-]?\d+)?|true|false|null)/.exec(text.slice(i, i + 40));
      if (!m) fail();
      i += m![0].length;
    }
    spans.set(pathKey(path), [start, i]);
  };
  try {
    value([]);
  } catch {
    // keep what was read
  }
  return spans;
}

/** Path segments of a `where` such as `bars[3].shift[0]`; null when it is not a JSON path. */
export function parsePath(where: string): (string | number)[] | null {
  const w = where.trim();
  if (!/^[A-Za-z_][\w]*(\[\d+\]|\.[A-Za-z_][\w]*)*$/.test(w)) return null;
  const out: (string | number)[] = [];
  const re = /([A-Za-z_][\w]*)|\[(\d+)\]/g;
  let m: RegExpExecArray | null;
  while ((m = re.exec(w))) out.push(m[1] !== undefined ? m[1] : Number(m[2]));
  return out;
}

/** The span to select for a problem location, or null when it cannot be found. */
export function locate(text: string, where: string): Span | null {
  const lc = /line (\d+), column (\d+)/.exec(where);
  if (lc) {
    const lines = text.split('\n');
    const line = Math.min(Number(lc[1]), lines.length);
    let off = 0;
    for (let k = 0; k < line - 1; k++) off += lines[k].length + 1;
    const at = Math.min(text.length, off + Number(lc[2]) - 1);
    return [at, Math.min(text.length, at + 1)];
  }
  const path = parsePath(where.split(':').pop()!.trim());
  if (!path) return null;
  const spans = valueSpans(text);
  for (let n = path.length; n > 0; n--) {
    const s = spans.get(pathKey(path.slice(0, n)));
    if (s) return s;
  }
  return null;
}
