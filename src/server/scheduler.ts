/**
 * One pacing loop for every live session on this thread. Each period (1/frameHz) it first gives
 * running sessions compute slices — in rotating order, from a shared budget that adapts so the
 * period holds — then lets every session send its frame. A session that gets no slice this round
 * falls behind (it runs slower than asked) instead of delaying everyone's frames; it goes first
 * next round.
 */
import type { Session } from './session.ts';

export interface SchedulerOptions {
  frameHz: number;
  /** Compute budget per period at most (ms). */
  maxBudgetMs: number;
  now(): number;
  /**
   * The budget shrinks while a round (with its lateness) takes more than this share of the
   * period, and grows back below `growBelow`. The main thread keeps room for its sockets (0.9 and
   * 0.75, the defaults); a session host has nothing else to serve and lets rounds fill the period
   * (1.2 and 1.0): under CPU contention it then takes what the OS gives instead of idling.
   */
  shrinkAbove?: number;
  growBelow?: number;
  /** The budget never shrinks below this (ms; default 2). */
  minBudgetMs?: number;
}

export class TickScheduler {
  private readonly sessions: Session[] = [];
  private timer: NodeJS.Timeout | undefined;
  private next = 0;
  private budgetMs: number;
  private dueMs = 0;
  /** Time a round spent (compute and frames) plus how late it started, smoothed (ms). */
  loadMs = 0;

  constructor(private readonly opts: SchedulerOptions) {
    this.budgetMs = opts.maxBudgetMs;
  }

  private get periodMs(): number {
    return 1000 / this.opts.frameHz;
  }

  add(s: Session): () => void {
    this.sessions.push(s);
    if (!this.timer) {
      this.dueMs = this.opts.now();
      this.arm();
    }
    return () => this.remove(s);
  }

  /** Fixed cadence: the next round is due one period after this one was, never in a burst to catch up. */
  private arm(): void {
    this.timer = setTimeout(() => this.round(), Math.max(0, this.dueMs - this.opts.now()));
  }

  private remove(s: Session): void {
    const i = this.sessions.indexOf(s);
    if (i >= 0) this.sessions.splice(i, 1);
    if (this.sessions.length === 0) this.stop();
  }

  stop(): void {
    if (this.timer) clearTimeout(this.timer);
    this.timer = undefined;
    this.sessions.length = 0;
  }

  get budget(): number {
    return this.budgetMs;
  }

  round(): void {
    const now = this.opts.now;
    const t0 = now();
    const lateMs = Math.max(0, t0 - this.dueMs);
    const list = this.sessions.slice();
    const running = list.filter((s) => s.running);
    const n = running.length;
    if (n > 0) {
      const start = this.next % n;
      let firstSkipped = -1;
      for (let k = 0; k < n; k++) {
        const i = (start + k) % n;
        const left = this.budgetMs - (now() - t0);
        const slice = left > 0 ? Math.max(0.3, left / (n - k)) : 0;
        if (slice === 0 && firstSkipped < 0) firstSkipped = i;
        running[i].computeTick(slice);
      }
      this.next = firstSkipped >= 0 ? firstSkipped : start + 1;
      // Time the others left unused goes to sessions still behind their pace (a heavy stretch of
      // one session, light ones elsewhere), so the thread is not idle while a session lags.
      for (let pass = 0; pass < 4; pass++) {
        const behind = running.filter((s) => s.behind);
        if (behind.length === 0 || this.budgetMs - (now() - t0) < 1) break;
        for (let k = 0; k < behind.length; k++) {
          const left = this.budgetMs - (now() - t0);
          if (left < 0.3) break;
          behind[k].computeTick(left / (behind.length - k), true);
        }
      }
    }
    // Paused sessions only have analysis work (a margin map) to do.
    for (const s of list) if (!s.running) s.computeTick(1);
    for (const s of list) s.frameTick();
    // Hold the frame period: shrink the compute budget when a round (with its lateness, i.e. other
    // work on this thread) fills the period, grow it back when there is room.
    const period = this.periodMs;
    this.loadMs = 0.7 * this.loadMs + 0.3 * (now() - t0 + lateMs);
    if (this.loadMs > (this.opts.shrinkAbove ?? 0.9) * period) this.budgetMs = Math.max(this.opts.minBudgetMs ?? 2, this.budgetMs * 0.85);
    else if (this.loadMs < (this.opts.growBelow ?? 0.75) * period) this.budgetMs = Math.min(this.opts.maxBudgetMs, this.budgetMs * 1.1);
    this.dueMs = Math.max(this.dueMs + period, now());
    if (this.sessions.length > 0) this.arm();
    else this.timer = undefined;
  }
}
