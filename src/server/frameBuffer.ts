/**
 * Records waiting for the next frame, decimated to what a chart can show. While the client is
 * slow (frames not sent), records keep arriving: the buffer thins itself by two whenever it holds
 * twice its target, so its memory is bounded whatever the simulation speed, and the records it
 * drops are counted. The first and the latest record always survive.
 */
export type ColumnValues = Record<string, Array<number | null>>;

export class FrameBuffer {
  private rows: Array<Array<number | null>> = [];
  private dropped = 0;

  constructor(
    readonly columns: readonly string[],
    private readonly maxPoints: number,
  ) {
    if (!(maxPoints >= 2)) throw new RangeError(`FrameBuffer: maxPoints must be ≥ 2, got ${maxPoints}`);
  }

  get size(): number {
    return this.rows.length;
  }

  push(record: Readonly<Record<string, unknown>>): void {
    const row = this.columns.map((c) => {
      const v = record[c];
      return typeof v === 'number' && Number.isFinite(v) ? v : null;
    });
    this.rows.push(row);
    if (this.rows.length >= 2 * this.maxPoints) this.thin();
  }

  /** Keep every other row (the last one included). */
  private thin(): void {
    const n = this.rows.length;
    const kept: Array<Array<number | null>> = [];
    for (let i = (n - 1) % 2; i < n; i += 2) kept.push(this.rows[i]);
    this.dropped += n - kept.length;
    this.rows = kept;
  }

  /** The buffered records as columns, at most maxPoints of them (evenly spaced, last kept); empties the buffer. */
  take(): { records: ColumnValues; dropped: number; count: number } {
    let rows = this.rows;
    let dropped = this.dropped;
    if (rows.length > this.maxPoints) {
      const n = rows.length;
      const m = this.maxPoints;
      const picked: Array<Array<number | null>> = [];
      for (let i = 0; i < m; i++) picked.push(rows[Math.round((i * (n - 1)) / (m - 1))]);
      dropped += n - m;
      rows = picked;
    }
    const records: ColumnValues = {};
    this.columns.forEach((c, j) => (records[c] = rows.map((r) => r[j])));
    this.rows = [];
    this.dropped = 0;
    return { records, dropped, count: rows.length };
  }

  clear(): void {
    this.rows = [];
    this.dropped = 0;
  }
}
