/** Human-readable rendering of an operating-point record, and of cautions, for the terminal. */
import { HARDWARE_NOTICE } from '../analysis/cautions.ts';
import type { PointRecord } from '../io/pointRecord.ts';
import { fixed, percent, si, table } from './format.ts';

type CautionLike = PointRecord['cautions'][number];

const DEVICE_ROWS: ReadonlyArray<readonly [keyof PointRecord['breakdown']['highSide'], string]> = [
  ['conductionW', 'conduction'],
  ['diodeW', 'body diode'],
  ['turnOnW', 'turn-on'],
  ['turnOffW', 'turn-off'],
  ['cossW', 'Coss'],
  ['recoveryW', 'reverse recovery'],
  ['gateW', 'gate (internal Rg)'],
  ['shootThroughW', 'shoot-through'],
];

const w = (x: number, d = 2): string => `${fixed(x, d)} W`;

function capLine(name: string, c: { rmsA: number; ratingA: number; lossW: number }): string[] {
  const util = c.ratingA > 0 ? c.rmsA / c.ratingA : Infinity;
  return [name, `${fixed(c.rmsA, 2)} A`, `${fixed(c.ratingA, 2)} A`, `${fixed(100 * util, 0)} %`, w(c.lossW, 3), util > 1 ? 'OVER RATING' : ''];
}

export function renderPoint(r: PointRecord): string {
  const out: string[] = [];
  const conv =
    r.topology === 'buck'
      ? `buck ${fixed(r.vinV, 1)} V → ${fixed(r.voutV, 2)} V, ${fixed(r.ioutA, 2)} A`
      : `half-bridge leg, DC link ${fixed(r.vinV, 1)} V, load current ${fixed(r.iValleyA, 2)} … ${fixed(r.iPeakA, 2)} A (mean ${fixed(r.ioutA, 2)} A)`;
  out.push(`${r.scenario}: ${conv}`);
  const status = r.status === 'ok' ? `converged in ${r.iterations} iterations` : r.status === 'runaway' ? 'THERMAL RUNAWAY' : `NOT CONVERGED after ${r.iterations} iterations`;
  out.push(`  fsw ${si(r.fswHz, 'Hz')}, dead time ${si(r.deadTimeS, 's')}, gate drive ${fixed(r.vDriveV, 1)} V, low side ${r.lowSideMode}; ${status}`);
  if (r.status !== 'ok') out.push('  the temperatures and losses below are where the electro-thermal iteration stopped, not an equilibrium');
  if (!r.regulated) out.push(`  OUTPUT NOT REGULATED: duty at its limit (${fixed(r.dutyCycle, 3)})`);
  out.push('');

  out.push('Power');
  out.push(
    table(
      [
        ['input', w(r.pinW), ''],
        ['output', w(r.poutW), ''],
        ['efficiency', percent(r.efficiency, 2), ''],
        ['duty cycle', fixed(r.dutyCycle, 4), ''],
        ['total loss', w(r.totalLossW), '100 %'],
        ['  semiconductors', w(r.semiconductorLossW), percent(r.semiconductorLossW / r.totalLossW, 0)],
        ['  passives', w(r.passiveLossW), percent(r.passiveLossW / r.totalLossW, 0)],
        ['  gate driver', w(r.gateDriverW), percent(r.gateDriverW / r.totalLossW, 0)],
      ],
      ['l', 'r', 'r'],
    ).trimEnd(),
  );
  out.push('');

  const hs = r.breakdown.highSide;
  const ls = r.breakdown.lowSide;
  const devRows: string[][] = [['Losses by device (W)', 'high side', 'low side']];
  for (const [k, label] of DEVICE_ROWS) if (hs[k] !== 0 || ls[k] !== 0 || k === 'conductionW') devRows.push([`  ${label}`, fixed(hs[k], 3), fixed(ls[k], 3)]);
  devRows.push(['  total', fixed(hs.totalW, 3), fixed(ls.totalW, 3)]);
  devRows.push(['Junction (°C)', fixed(r.tjC.highSide, 1), fixed(r.tjC.lowSide, 1)]);
  devRows.push(['  limit', fixed(r.tjMaxC.highSide, 0), fixed(r.tjMaxC.lowSide, 0)]);
  out.push(table(devRows, ['l', 'r', 'r'], '').trimEnd());
  out.push('');

  out.push('Passive losses');
  const passive: string[][] = [];
  if (r.topology === 'buck') {
    passive.push(['inductor copper', w(r.breakdown.inductorCopperW, 3)]);
    passive.push(['inductor core', w(r.breakdown.inductorCoreW, 3)]);
    passive.push(['output capacitor', w(r.breakdown.capOutW, 3)]);
    passive.push(['input capacitor', w(r.breakdown.capInW, 3)]);
  } else passive.push(['DC-link capacitor', w(r.breakdown.capInW, 3)]);
  out.push(table(passive).trimEnd());
  out.push('');

  out.push('Ripple');
  const rip: string[][] =
    r.topology === 'buck'
      ? [['inductor current', `${fixed(r.iValleyA, 2)} … ${fixed(r.iPeakA, 2)} A`, `(${fixed(r.ripplePpA, 2)} A p-p${r.iValleyA < 0 ? ', reverses each period' : ''})`]]
      : [['load current ripple', `${fixed(r.ripplePpA, 2)} A p-p`, '(largest over the reference)']];
  if (r.topology === 'buck') rip.push(['output voltage', `${si(r.voutRipplePpV, 'V')} p-p`, '']);
  out.push(table(rip, ['l', 'r', 'l']).trimEnd());
  out.push('');

  const caps: string[][] = [['Capacitors', 'ripple rms', 'rating', 'use', 'loss']];
  if (r.capacitors.output) caps.push(capLine('  output', r.capacitors.output));
  caps.push(capLine(r.topology === 'buck' ? '  input' : '  DC link', r.capacitors.input));
  out.push(table(caps, ['l', 'r', 'r', 'r', 'r', 'l'], '').trimEnd());
  out.push('');

  out.push('Heat');
  out.push(
    table([
      ['to coolant', w(r.heatToCoolantW), `= ${percent(r.usefulHeatFraction, 0)} of the total loss${r.heatToAmbientW < 0 ? `, including ${w(-r.heatToAmbientW)} drawn from ambient` : ''}`],
      ['to ambient', w(r.heatToAmbientW), ''],
      ['heatsink', `${fixed(r.heatsinkC, 2)} °C`, ''],
      ['coolant out', `${fixed(r.coolantOutC, 3)} °C`, ''],
    ], ['l', 'r', 'l']).trimEnd(),
  );
  out.push('');
  out.push(`energy balance residual ${r.energyBalanceResidual.toExponential(1)}`);
  return `${out.join('\n')}\n`;
}

/** The cautions block followed by the hardware notice; empty when there is no caution. */
export function renderCautions(cautions: readonly CautionLike[]): string {
  if (cautions.length === 0) return '';
  const rows = cautions.map((c) => [c.severity, c.code, c.message]);
  return `\nCautions\n${table(rows, ['l', 'l', 'l'])}\n${HARDWARE_NOTICE}\n`;
}
