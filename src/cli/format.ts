/** Plain-text formatting for terminal output: aligned tables and numbers with SI prefixes. */

export type Align = 'l' | 'r';

/** Columns padded to their widest cell; `align` per column (default: first left, rest right). */
export function table(rows: readonly (readonly string[])[], align?: readonly Align[], indent = '  '): string {
  const widths: number[] = [];
  for (const r of rows) r.forEach((c, i) => (widths[i] = Math.max(widths[i] ?? 0, [...c].length)));
  const lines = rows.map((r) =>
    r
      .map((c, i) => {
        const a = align?.[i] ?? (i === 0 ? 'l' : 'r');
        const pad = ' '.repeat(widths[i] - [...c].length);
        return a === 'l' ? c + pad : pad + c;
      })
      .join('  ')
      .trimEnd(),
  );
  return lines.map((l) => indent + l).join('\n') + '\n';
}

export function fixed(x: number, digits: number): string {
  if (Number.isNaN(x)) return 'n/a';
  if (!Number.isFinite(x)) return x > 0 ? '∞' : '-∞';
  const s = x.toFixed(digits);
  // Avoid "-0.00" for values that round to zero.
  return /^-0\.?0*$/.test(s) ? s.slice(1) : s;
}

const PREFIXES: ReadonlyArray<readonly [number, string]> = [
  [1e9, 'G'],
  [1e6, 'M'],
  [1e3, 'k'],
  [1, ''],
  [1e-3, 'm'],
  [1e-6, 'µ'],
  [1e-9, 'n'],
  [1e-12, 'p'],
];

/** `si(100000, 'Hz')` → "100 kHz", `si(4e-8, 's')` → "40 ns": three significant digits, trailing zeros dropped. */
export function si(x: number, unit: string, significant = 3): string {
  if (!Number.isFinite(x)) return `${fixed(x, 0)} ${unit}`;
  if (x === 0) return `0 ${unit}`;
  const ax = Math.abs(x);
  const [scale, prefix] = PREFIXES.find(([s]) => ax >= s * 0.9995) ?? PREFIXES[PREFIXES.length - 1];
  const v = Number((x / scale).toPrecision(significant));
  return `${v} ${prefix}${unit}`;
}

/** A sweep value as typed by a person: up to 6 significant digits, JS exponent form for extremes. */
export function plain(x: number): string {
  return String(Number(x.toPrecision(6)));
}

export function percent(fraction: number, digits = 1): string {
  return `${fixed(100 * fraction, digits)} %`;
}
