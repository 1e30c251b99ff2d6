/**
 * CSV for nested records: objects are flattened to dotted keys (`tjC.highSide`), columns keep
 * the order in which keys first appear across rows, fields are quoted per RFC 4180.
 */

export type Flat = Record<string, string | number | boolean | null>;

function isPlainObject(v: unknown): v is Record<string, unknown> {
  return v !== null && typeof v === 'object' && !Array.isArray(v);
}

/**
 * Flatten nested objects into dotted keys. Arrays of scalars are joined with `;`; arrays holding
 * objects are kept as JSON text; `null` and `undefined` become null (an empty field).
 */
export function flatten(value: Readonly<Record<string, unknown>>, prefix = '', out: Flat = {}): Flat {
  for (const [k, v] of Object.entries(value)) {
    const key = prefix ? `${prefix}.${k}` : k;
    if (isPlainObject(v)) flatten(v, key, out);
    else if (Array.isArray(v)) out[key] = v.some((x) => x !== null && typeof x === 'object') ? JSON.stringify(v) : v.join(';');
    else if (v === undefined || v === null) out[key] = null;
    else if (typeof v === 'number' || typeof v === 'boolean' || typeof v === 'string') out[key] = v;
    else out[key] = String(v);
  }
  return out;
}

/** Union of the rows' keys in first-seen order: the column order is stable for a given input. */
export function columnsOf(rows: readonly Flat[]): string[] {
  const seen = new Set<string>();
  for (const r of rows) for (const k of Object.keys(r)) seen.add(k);
  return [...seen];
}

export function csvField(v: string | number | boolean | null | undefined): string {
  if (v === null || v === undefined) return '';
  const s = String(v);
  return /[",\r\n]/.test(s) || s !== s.trim() ? `"${s.replace(/"/g, '""')}"` : s;
}

/** Header line plus one line per row, `\n`-terminated. Missing fields are empty. */
export function toCsv(rows: readonly Readonly<Record<string, unknown>>[], columns?: readonly string[]): string {
  const flat = rows.map((r) => flatten(r));
  const cols = columns ?? columnsOf(flat);
  const lines = [cols.map(csvField).join(',')];
  for (const r of flat) lines.push(cols.map((c) => csvField(r[c])).join(','));
  return `${lines.join('\n')}\n`;
}
