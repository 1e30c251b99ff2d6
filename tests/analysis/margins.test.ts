import { describe, expect, it } from 'vitest';
import { marginMap, marginsAt, marginsBode, stableFswBand, suggestGains } from '../../src/analysis/margins.ts';
import { sweepValues } from '../../src/analysis/sweep.ts';
import { ScenarioError } from '../../src/scenario/errors.ts';
import { withOverrides } from '../../src/scenario/parse.ts';
import { expectClose } from '../helpers/expectClose.ts';
import { caseScenario, halfBridgeLoop } from './fixtures.ts';

const demo = caseScenario('buck-aux-48v');
const ps = caseScenario('buck-persample-unstable');

describe('marginsAt', () => {
  it('reports both bases at the operating point; the configured one carries the scenario gains', () => {
    const r = marginsAt(demo);
    expect(r.configuredBasis).toBe('continuous');
    expect(r.bases.continuous).toMatchObject({ configured: true, kp: 0.002, ki: 60, stable: true, marginsAgree: true, nyquistUnstable: 0 });
    expect(r.bases.perSample.configured).toBe(false);
    expectClose(r.bases.perSample.ki, 60 * 1e-5, { rel: 1e-12, what: 'equivalent per-sample ki' });
    // At the nominal fsw the two bases differ only by Tustin vs rectangular integration (half a
    // sample of integral): about 1° and 0.1 dB here.
    expectClose(r.bases.perSample.pmDeg, r.bases.continuous.pmDeg, { abs: 2, what: 'PM' });
    expectClose(r.bases.perSample.gmDb, r.bases.continuous.gmDb, { abs: 0.3, what: 'GM' });
    expect(r.bases.continuous.pmDeg).toBeGreaterThan(45);
    expect(r.bases.continuous.gmDb).toBeGreaterThan(6);
    expect(r.point.thermal).toBe('ok');
    expect(r.plant.q).toBeGreaterThan(1);
  });

  it('takes knob, load and gain overrides without re-parsing', () => {
    const a = marginsAt(demo, { fswHz: 200e3, vDriveV: 7, loadROhm: 1, kp: 0.003 });
    const b = marginsAt(withOverrides(demo, { 'pwm.fswHz': 200e3, 'gateDrive.vDriveV': 7, 'buck.load.rOhm': 1, 'control.kp': 0.003 }));
    for (const basis of ['continuous', 'perSample'] as const) {
      // Same code path below the context; only the per-sample equivalence point differs (nominal fsw
      // stays 100 kHz with overrides, becomes 200 kHz when re-parsed), so compare continuous exactly.
      if (basis === 'perSample') continue;
      expectClose(a.bases[basis].pmDeg, b.bases[basis].pmDeg, { abs: 1e-9, what: 'PM' });
      expectClose(a.bases[basis].gmDb, b.bases[basis].gmDb, { abs: 1e-9, what: 'GM' });
    }
  });

  it('half-bridge current loop: margins of the regulated current; a sine reference is linearized at its peak, with a note', () => {
    const dc = marginsAt(halfBridgeLoop(), { tjHsC: 25, tjLsC: 25 });
    expect(dc.regulated).toBe('iA');
    expect(dc.plant.realPolesHz).toHaveLength(2);
    // Crossover ≈ kp·V_link/(2π·L) = 0.4·48/(2π·0.5 mH) ≈ 6.1 kHz for the integrator-like R–L branch.
    expectClose(dc.bases.continuous.crossoverHz, (0.4 * 48) / (2 * Math.PI * 500e-6), { rel: 0.05, what: 'crossover' });
    // 1 A + 3 A·sin: no equilibrium; quasi-static at the 4 A peak, i.e. the DC case's point.
    const sine = marginsAt(withOverrides(halfBridgeLoop(), { 'halfBridge.reference': { kind: 'sine', amplitudeA: 3, freqHz: 50, offsetA: 1 } }), { tjHsC: 25, tjLsC: 25 });
    expect(sine.warnings.join(' ')).toMatch(/sine reference: no equilibrium, .*at the reference peak 4 A/);
    expectClose(sine.bases.continuous.pmDeg, dc.bases.continuous.pmDeg, { abs: 1e-9, what: 'PM at the peak' });
  });

  it('Bode data span the Nyquist frequency for both bases, with the continuous approximation', () => {
    const bd = marginsBode(demo, {}, 200);
    expect(bd.freqHz).toHaveLength(200);
    expectClose(bd.freqHz[199], 50e3, { rel: 1e-12, what: 'last frequency = Nyquist' });
    expect(bd.exact.continuous.phaseDeg[0]).toBeGreaterThan(-100);
    expect(bd.exact.continuous.magDb[0]).toBeGreaterThan(20);
    expect(bd.approx.perSample.magDb).toHaveLength(200);
  });
});

describe('marginMap', () => {
  const fsw = sweepValues(20e3, 300e3, 9, true);

  it('fast paths give the same numbers as re-parsed scenarios', () => {
    const m = marginMap(demo, [{ path: 'pwm.fswHz', values: fsw.slice(0, 3) }, { path: 'gateDrive.vDriveV', values: [6, 10] }]);
    expect(m.cells).toHaveLength(6);
    for (const c of m.cells) {
      const r = marginsAt(withOverrides(demo, { 'pwm.fswHz': c.values[0], 'gateDrive.vDriveV': c.values[1] }));
      expect(c.status).toBe('ok');
      // The map samples the response more coarsely (10/decade, refined); crossings are solved to
      // ~1e−12 either way, so the margins agree to rounding.
      expectClose(c.bases!.continuous.pmDeg, r.bases.continuous.pmDeg, { abs: 1e-7, what: 'PM' });
      expectClose(c.bases!.continuous.gmDb, r.bases.continuous.gmDb, { abs: 1e-7, what: 'GM' });
      expectClose(c.bases!.continuous.maxPoleAbs, r.bases.continuous.maxPoleAbs, { abs: 1e-12, what: 'max |λ|' });
    }
  });

  it('continuous-basis gains keep the crossover (±1 %) across 20–300 kHz; per-sample gains move it with fsw', () => {
    const m = marginMap(demo, [{ path: 'pwm.fswHz', values: fsw }]);
    const c = m.cells.map((x) => x.bases!.continuous);
    const p = m.cells.map((x) => x.bases!.perSample);
    for (const x of c) expectClose(x.crossoverHz, c[4].crossoverHz, { rel: 0.01, what: 'continuous crossover' });
    expect(p[8].crossoverHz / p[0].crossoverHz).toBeGreaterThan(10);
    expect(c.every((x) => x.stable && x.pmDeg > 45)).toBe(true);
  });

  it('the per-sample case is fine at 100 kHz and goes unstable between 150 and 300 kHz, where PM and GM cross zero together', () => {
    const values = sweepValues(100e3, 300e3, 41);
    const m = marginMap(ps, [{ path: 'pwm.fswHz', values }]);
    const b = m.cells.map((x) => x.bases!.perSample);
    expect(b[0].stable).toBe(true);
    expect(b[0].pmDeg).toBeGreaterThan(45);
    expect(b[0].gmDb).toBeGreaterThan(6);
    const iFirstUnstable = b.findIndex((x) => !x.stable);
    const fCross = values[iFirstUnstable];
    expect(fCross).toBeGreaterThan(150e3);
    expect(fCross).toBeLessThan(300e3);
    expect(b.slice(iFirstUnstable).every((x) => !x.stable && x.pmDeg < 0 && x.gmDb < 0 && x.maxPoleAbs > 1)).toBe(true);
    expect(b.slice(0, iFirstUnstable).every((x) => x.stable && x.pmDeg > 0 && x.gmDb > 0 && x.maxPoleAbs < 1)).toBe(true);
    // The phase margin falls monotonically as fsw rises.
    for (let i = 1; i < b.length; i++) expect(b[i].pmDeg).toBeLessThan(b[i - 1].pmDeg);
    // Same gains in the continuous basis: stable with PM > 60° across the whole range.
    const cont = marginMap(withOverrides(ps, { 'control.basis': 'continuous', 'control.ki': 100 }), [{ path: 'pwm.fswHz', values: sweepValues(20e3, 300e3, 15, true) }]);
    expect(cont.cells.every((x) => x.bases!.continuous.stable && x.bases!.continuous.pmDeg > 60 && x.bases!.continuous.gmDb > 5)).toBe(true);
  });

  it('maps any field path (re-validated per value) and reports cells with no loop as refused', () => {
    const m = marginMap(demo, [{ path: 'pwm.dutyMax', values: [0.2, 0.95] }]);
    expect(m.cells[0]).toMatchObject({ status: 'refused' });
    expect(m.cells[0].reason).toMatch(/not regulated/);
    expect(m.cells[1].status).toBe('ok');
    const cap = marginMap(demo, [{ path: 'buck.outputCap.cF', values: [100e-6, 400e-6] }]);
    expect(cap.cells[0].bases!.continuous.phaseCrossoverHz).toBeGreaterThan(cap.cells[1].bases!.continuous.phaseCrossoverHz);
  });

  it('rejects values the schema rejects, before computing anything', () => {
    expect(() => marginMap(demo, [{ path: 'pwm.fswHz', values: [100e3, -1] }])).toThrow(ScenarioError);
    expect(() => marginMap(demo, [{ path: 'pwm.fswHz', values: [100e3, -1] }])).toThrow(/pwm\.fswHz = -1/);
    // Coupled limit: dead time above 25 % of the period at the corner (5 µs × 100 kHz).
    expect(() => marginMap(demo, [{ path: 'pwm.fswHz', values: [20e3, 100e3] }, { path: 'pwm.deadTimeS', values: [40e-9, 5e-6] }])).toThrow(/25 %/);
    expect(() => marginMap(demo, [{ path: 'nope.field', values: [1] }])).toThrow(/unknown field/);
    expect(() => marginMap(demo, [])).toThrow(/one or two axes/);
  });
});

describe('stableFswBand (supervisor hook)', () => {
  it('the per-sample case: the 6 dB gain-margin floor ends the band just above 100 kHz; without floors the band ends where the loop goes unstable', () => {
    const b = stableFswBand(ps, { pmFloorDeg: 45, gmFloorDb: 6, fswMinHz: 20e3, fswMaxHz: 300e3, steps: 24 });
    expect(b.ok).toBe(true);
    expect(b.loHz).toBeLessThan(100e3);
    expect(b.hiHz).toBeGreaterThan(100e3);
    expect(b.hiHz).toBeLessThan(150e3);
    expect(b.hiLimit).toBe('gainMargin');
    const bare = stableFswBand(ps, { pmFloorDeg: 0, gmFloorDb: 0, fswMinHz: 20e3, fswMaxHz: 300e3, steps: 24 });
    expect(bare.hiHz).toBeGreaterThan(200e3);
    expect(bare.hiHz).toBeLessThan(260e3);
    expect(['unstable', 'phaseMargin', 'gainMargin']).toContain(bare.hiLimit);
    // At the edge the margin is at its floor (bisected to ~0.1 % of the grid step).
    const edge = marginsAt(ps, { fswHz: b.hiHz }).bases.perSample;
    expectClose(edge.gmDb, 6, { abs: 0.05, what: 'GM at the band edge' });
  });

  it('is cached: the same request returns the same object', () => {
    const o = { pmFloorDeg: 45, gmFloorDb: 6, fswMinHz: 20e3, fswMaxHz: 300e3, steps: 12 };
    expect(stableFswBand(ps, o)).toBe(stableFswBand(ps, { ...o }));
  });

  it('continuous-basis gains on the demo hold the floors over the whole range', () => {
    const b = stableFswBand(demo, { pmFloorDeg: 45, gmFloorDb: 6, fswMinHz: 20e3, fswMaxHz: 300e3, steps: 12, vDriveV: 8 });
    expect(b).toMatchObject({ ok: true, loHz: 20e3, hiHz: 300e3, loLimit: 'range', hiLimit: 'range' });
  });

  it('says so when the frequency to contain fails the floors itself', () => {
    const b = stableFswBand(ps, { pmFloorDeg: 45, gmFloorDb: 6, fswMinHz: 20e3, fswMaxHz: 300e3, aroundHz: 280e3 });
    expect(b.ok).toBe(false);
    expect(b.loHz).toBeNaN();
    expect(b.reason).toMatch(/fails the floors at 280000 Hz itself .*unstable/);
  });
});

describe('suggestGains', () => {
  it('per-sample case over 100–300 kHz: gains that hold both floors at every corner, bound at the top of the band', () => {
    const s = suggestGains(ps, { fswBandHz: [100e3, 300e3], pmFloorDeg: 45, gmFloorDb: 6 });
    expect(s.basis).toBe('perSample');
    expect(s.corners.every((c) => c.holds)).toBe(true);
    expect(s.binding?.fswHz).toBe(300e3);
    expect(s.current.holds).toBe(false);
    expect(s.explanation.join('\n')).toMatch(/binding corner: fsw 300 kHz/);
    // 1 % more gain breaks a floor (the search stopped at the boundary).
    const over = marginsAt(ps, { fswHz: 300e3, kp: s.kp * 1.02, ki: s.ki * 1.02 }).bases.perSample;
    expect(over.pmDeg < 45 || over.gmDb < 6).toBe(true);
  });

  it('continuous demo over 20–300 kHz and full/tenth load: the demo gains fail at light load, the suggestion holds everywhere', () => {
    // At 4.8 Ω (2.5 A) the output filter's Q rises from 1.8 to 11.8 and the demo gains lose their
    // gain margin to the resonance (unstable at 20 kHz): the suggestion trades crossover for it.
    const s = suggestGains(demo, { fswBandHz: [20e3, 300e3], loads: [0.48, 4.8], pmFloorDeg: 45, gmFloorDb: 6 });
    expect(s.current.holds).toBe(false);
    expect(s.current.corners.find((c) => c.fswHz === 20e3 && c.load === 4.8)!.stable).toBe(false);
    expect(s.corners).toHaveLength(6);
    expect(s.corners.every((c) => c.holds)).toBe(true);
    expect(s.binding).toMatchObject({ load: 4.8 });
    expect(s.worstCrossoverHz).toBeGreaterThan(100);
  });
});
