/** Terminal rendering of loop margins, margin maps and gain suggestions. */
import type { PiBasis } from '../control/pi.ts';
import { STEP_DISCREPANCY_WARN } from '../analysis/linearize.ts';
import type { MapCell, MarginMap, MarginsResult } from '../analysis/margins.ts';
import type { GainSuggestion } from '../analysis/suggestGains.ts';
import type { StabilityMargins } from '../analysis/stabilityMargins.ts';
import { fixed, plain, si, table } from './format.ts';

const BASIS_LABEL: Record<PiBasis, string> = { continuous: 'continuous', perSample: 'perSample' };

export const hz = (x: number): string => (Number.isNaN(x) ? 'none' : si(x, 'Hz'));
export const deg = (x: number): string => (Number.isFinite(x) ? `${fixed(x, 1)}°` : x > 0 ? '∞ (no crossover)' : 'n/a');
export const db = (x: number): string => (Number.isFinite(x) ? `${fixed(x, 2)} dB` : x > 0 ? '∞ (no phase crossover)' : 'n/a');
export const verdict = (stable: boolean): string => (stable ? 'stable' : 'UNSTABLE');

function kiText(basis: PiBasis, ki: number): string {
  return basis === 'continuous' ? `${plain(ki)} /s` : `${plain(ki)} /sample`;
}

export function renderMargins(r: MarginsResult): string {
  const p = r.point;
  const out: string[] = [];
  const y = r.regulated === 'vOutV' ? `vOut ${fixed(p.vOutV, 3)} V, iL ${fixed(p.iMeanA, 2)} A` : `i ${fixed(p.iMeanA, 3)} A, link ${fixed(p.vBusV, 1)} V`;
  out.push(`loop margins of ${r.scenario} (${r.topology === 'buck' ? 'buck voltage loop' : 'half-bridge current loop'})`);
  out.push(`  fsw ${si(p.fswHz, 'Hz')}, sample period ${si(p.tsS, 's')}, delay ${r.loop.delaySamples} sample${r.loop.delaySamples === 1 ? '' : 's'}, ${r.loop.sensorFilterHz === null ? 'no feedback filter' : `feedback filter ${si(r.loop.sensorFilterHz, 'Hz')}`}`);
  out.push(`  point: duty ${fixed(p.duty, 4)}, ${y}, Tj ${fixed(p.tjHsC, 1)} / ${fixed(p.tjLsC, 1)} °C${p.thermal === 'fixed' ? ' (fixed)' : ''}`);
  const pl = r.plant;
  const dyn = pl.realPolesHz.length > 0 ? `real poles at ${pl.realPolesHz.map((f) => si(f, 'Hz')).join(' and ')}` : `resonance ${si(pl.f0Hz, 'Hz')}, Q ${fixed(pl.q, 3)}`;
  out.push(`  plant (duty → ${r.regulated === 'vOutV' ? 'vOut' : 'i'}): DC gain ${fixed(pl.dcGain, 3)}, ${dyn}`);
  out.push('');
  const head = ['basis', 'kp', 'ki', 'crossover', 'PM', 'GM', 'at', 'max |λ|', 'verdict'];
  const rows = (['continuous', 'perSample'] as const).map((b) => {
    const m = r.bases[b];
    return [
      `${BASIS_LABEL[b]}${m.configured ? ' *' : ''}`,
      plain(m.kp),
      kiText(b, m.ki),
      hz(m.crossoverHz),
      deg(m.pmDeg),
      db(m.gmDb),
      hz(m.phaseCrossoverHz),
      fixed(m.maxPoleAbs, 5),
      verdict(m.stable),
    ];
  });
  out.push(table([head, ...rows], ['l', 'r', 'r', 'r', 'r', 'r', 'r', 'r', 'l']).trimEnd());
  const other = r.configuredBasis === 'continuous' ? 'perSample' : 'continuous';
  out.push(`  * configured basis; ${other} uses the equivalent gains at the nominal ${si(r.loop.nominalFswHz, 'Hz')} (same kp, same integral per sample)`);
  for (const b of ['continuous', 'perSample'] as const) {
    const m = r.bases[b];
    if (m.gainCrossingsHz.length > 1 || m.phaseCrossingsHz.length > 1)
      out.push(`  ${b}: gain crossovers at ${m.gainCrossingsHz.map(hz).join(', ')}; phase crossovers at ${m.phaseCrossingsHz.map(hz).join(', ')}`);
  }
  for (const w of r.warnings) out.push(`  note: ${w}`);
  return `${out.join('\n')}\n`;
}

const cellPm = (c: MapCell, b: PiBasis): string => (c.status === 'ok' ? fixed(c.bases![b].pmDeg, 1) + (c.bases![b].stable ? '' : '!') : '—');
const cellGm = (c: MapCell, b: PiBasis): string => (c.status === 'ok' ? fixed(c.bases![b].gmDb, 1) + (c.bases![b].stable ? '' : '!') : '—');

function shortMargin(m: Pick<StabilityMargins, 'pmDeg' | 'gmDb' | 'crossoverHz'> & { stable: boolean; maxPoleAbs: number }): string[] {
  return [hz(m.crossoverHz), Number.isFinite(m.pmDeg) ? fixed(m.pmDeg, 1) : '∞', Number.isFinite(m.gmDb) ? fixed(m.gmDb, 2) : '∞', fixed(m.maxPoleAbs, 5), verdict(m.stable)];
}

export function renderMap(m: MarginMap): string {
  const out: string[] = [];
  const conf = m.configuredBasis;
  const other: PiBasis = conf === 'continuous' ? 'perSample' : 'continuous';
  out.push(`margin map of ${m.scenario} over ${m.axes.map((a) => `${a.path} (${a.values.length})`).join(' × ')}; configured basis ${conf}, ${other} with equivalent gains at the nominal fsw`);
  if (m.axes.length === 1) {
    const head = [m.axes[0].path, `${conf}: fc`, 'PM °', 'GM dB', 'max |λ|', 'verdict', `${other}: fc`, 'PM °', 'GM dB', 'max |λ|', 'verdict'];
    const rows = m.cells.map((c) =>
      c.status === 'ok' ? [plain(c.values[0]), ...shortMargin(c.bases![conf]), ...shortMargin(c.bases![other])] : [plain(c.values[0]), `refused: ${c.reason}`],
    );
    out.push(table([head, ...rows]).trimEnd());
  } else {
    const [a, b] = m.axes;
    for (const basis of [conf, other]) {
      for (const [what, cell] of [['phase margin (°)', cellPm], ['gain margin (dB)', cellGm]] as const) {
        out.push('');
        out.push(`${what}, ${basis} basis (rows ${a.path}, columns ${b.path}; ! = unstable, — = no operating point)`);
        const head = [`${a.path} \\ ${b.path}`, ...b.values.map(plain)];
        const rows = a.values.map((va, i) => [plain(va), ...b.values.map((_, j) => cell(m.cells[i * b.values.length + j], basis))]);
        out.push(table([head, ...rows]).trimEnd());
      }
    }
  }
  const rough = m.cells.filter((c) => (c.stepDiscrepancy ?? 0) > STEP_DISCREPANCY_WARN);
  if (rough.length > 0) out.push(`  note: at ${rough.length} cell(s) the averaged model is not smooth (linearization steps disagree by up to ${fixed(100 * Math.max(...rough.map((c) => c.stepDiscrepancy!)), 1)} %): margins there are indicative`);
  const refused = m.cells.filter((c) => c.status !== 'ok');
  if (refused.length > 0) out.push(`  ${refused.length} cell(s) have no small-signal loop, e.g. ${refused[0].reason}`);
  return `${out.join('\n')}\n`;
}

export function renderSuggestion(s: GainSuggestion): string {
  const out: string[] = [];
  out.push(`gain suggestion (${s.basis} basis)`);
  for (const line of s.explanation) out.push(`  ${line}`);
  const corners = s.corners.length > 0 ? s.corners : s.current.corners;
  const title = s.corners.length > 0 ? 'suggested gains at each corner' : "the scenario's gains at each corner";
  out.push('');
  out.push(`${title}:`);
  const head = ['fsw', s.loadField, 'crossover', 'PM °', 'GM dB', 'verdict', 'floors'];
  const rows = corners.map((c) => [hz(c.fswHz), plain(c.load), hz(c.crossoverHz), fixed(c.pmDeg, 1), fixed(c.gmDb, 2), verdict(c.stable), c.holds ? 'hold' : 'FAIL']);
  out.push(table([head, ...rows]).trimEnd());
  return `${out.join('\n')}\n`;
}
