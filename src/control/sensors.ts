/**
 * Sensor models driven by the simulator with explicit time steps: a
 * shunt-based digital power monitor, the electrical loss estimate built from two
 * of them, a first-order-lag temperature sensor and a coolant heat meter.
 *
 * Inputs are taken as constant over each step dtS (zero-order input); with that
 * assumption every update here is exact, whatever dtS is. Random noise comes
 * from the generator passed in; step functions allocate nothing.
 */
import {
  failCheck,
  requireFinite,
  requireInteger,
  requireNonNegative,
  requirePositive,
} from './check.ts';
import type { RandomSource } from './rng.ts';

// ---------------------------------------------------------------------------
// Power monitor
// ---------------------------------------------------------------------------

export interface PowerMonitorConfig {
  /** Duration of one conversion window, s (> 0). */
  readonly conversionTimeS: number;
  /** Conversions averaged per published reading (integer ≥ 1). */
  readonly averagingCount: number;
  /** Quantization step of the published reading, W (> 0). */
  readonly lsbW: number;
  /** Relative gain error, e.g. 0.005 for +0.5 % (> −1). */
  readonly gainError: number;
  /** Offset added to the reading, W. */
  readonly offsetW: number;
  /** RMS noise of a published (already averaged) reading, W (≥ 0). */
  readonly noiseRmsW: number;
}

/** Mutable monitor state (plain numeric fields). */
export interface PowerMonitor {
  readonly cfg: PowerMonitorConfig;
  readonly rng: RandomSource;
  /** Time already spent in the current conversion window, s. */
  windowElapsedS: number;
  /** ∫P dt over the current conversion window so far, J. */
  windowEnergyJ: number;
  /** Finished conversions in the current averaging set. */
  conversionsInSet: number;
  /** Sum of the mean powers of those conversions, W. */
  setSumW: number;
  /** Published register value (integer count of lsbW); NaN before the first set. */
  code: number;
  /** Published reading code·lsbW, W; NaN before the first set. */
  reading: number;
  /** Number of readings published so far. */
  updates: number;
}

/** Relative tolerance on window boundaries, so that k·dt reaching a boundary up to rounding counts as reaching it. */
const BOUNDARY_REL_TOL = 1e-9;

export function validatePowerMonitorConfig(cfg: PowerMonitorConfig): void {
  if (cfg === null || typeof cfg !== 'object') failCheck('powerMonitor', 'must be a config object', cfg);
  requirePositive('powerMonitor.conversionTimeS', cfg.conversionTimeS);
  requireInteger('powerMonitor.averagingCount', cfg.averagingCount, 1);
  requirePositive('powerMonitor.lsbW', cfg.lsbW);
  requireFinite('powerMonitor.gainError', cfg.gainError);
  if (!(cfg.gainError > -1)) failCheck('powerMonitor.gainError', 'must be > -1', cfg.gainError);
  requireFinite('powerMonitor.offsetW', cfg.offsetW);
  requireNonNegative('powerMonitor.noiseRmsW', cfg.noiseRmsW);
}

/**
 * A monitor at the start of a conversion window, nothing published yet.
 * The noise generator is drawn from once per published reading (only when
 * noiseRmsW > 0); give each monitor its own generator (e.g. rng.fork(i)).
 */
export function createPowerMonitor(cfg: PowerMonitorConfig, rng: RandomSource): PowerMonitor {
  validatePowerMonitorConfig(cfg);
  if (rng === null || typeof rng !== 'object' || typeof rng.normal !== 'function') {
    failCheck('powerMonitor.rng', 'must be a RandomSource with normal()', rng);
  }
  return {
    cfg,
    rng,
    windowElapsedS: 0,
    windowEnergyJ: 0,
    conversionsInSet: 0,
    setSumW: 0,
    code: Number.NaN,
    reading: Number.NaN,
    updates: 0,
  };
}

function finishConversion(mon: PowerMonitor): void {
  const cfg = mon.cfg;
  mon.setSumW += mon.windowEnergyJ / cfg.conversionTimeS;
  mon.windowEnergyJ = 0;
  mon.conversionsInSet += 1;
  if (mon.conversionsInSet < cfg.averagingCount) return;

  const avgW = mon.setSumW / cfg.averagingCount;
  mon.setSumW = 0;
  mon.conversionsInSet = 0;
  const noiseW = cfg.noiseRmsW > 0 ? cfg.noiseRmsW * mon.rng.normal() : 0;
  // Published value: round((avg·(1 + gainError) + offsetW + noise)/lsbW)·lsbW.
  const code = Math.round((avgW * (1 + cfg.gainError) + cfg.offsetW + noiseW) / cfg.lsbW);
  mon.code = code;
  mon.reading = code * cfg.lsbW;
  mon.updates += 1;
}

/**
 * Advance the monitor by dtS with the true power held at truePowerW.
 *
 * Each conversion window integrates the true power exactly (mean power =
 * energy/conversionTimeS); a step spanning window boundaries is split at them,
 * so dtS may be smaller or larger than a window (or span many). After
 * averagingCount conversions a new quantized reading is published and held
 * (sample-and-hold) until the next full set: readings change exactly every
 * conversionTimeS·averagingCount of simulated time.
 */
export function powerMonitorStep(mon: PowerMonitor, truePowerW: number, dtS: number): void {
  if (!Number.isFinite(truePowerW)) failCheck('powerMonitor.step.truePowerW', 'must be finite', truePowerW);
  if (!(dtS >= 0) || !Number.isFinite(dtS)) failCheck('powerMonitor.step.dtS', 'must be finite and >= 0', dtS);
  const windowS = mon.cfg.conversionTimeS;
  const tolS = windowS * BOUNDARY_REL_TOL;
  // `+dtS`: a number already, but this way the loop variable stays an unboxed double in optimized code.
  let remainingS = +dtS;
  while (remainingS > 0) {
    const leftS = windowS - mon.windowElapsedS;
    if (remainingS >= leftS - tolS) {
      // The step reaches the end of this window: integrate to the boundary.
      mon.windowEnergyJ += truePowerW * leftS;
      remainingS -= leftS;
      finishConversion(mon);
      // A rounding-sized overshoot (remainingS slightly < 0) is carried into the
      // next window as negative elapsed time, so simulated time is conserved.
      mon.windowElapsedS = remainingS < 0 ? remainingS : 0;
    } else {
      mon.windowEnergyJ += truePowerW * remainingS;
      mon.windowElapsedS += remainingS;
      remainingS = 0;
    }
  }
}

/** Latest published reading, W; NaN before the first full averaged set. */
export function powerMonitorReading(mon: PowerMonitor): number {
  return mon.reading;
}

/** Number of readings published so far. */
export function powerMonitorUpdates(mon: PowerMonitor): number {
  return mon.updates;
}

/** Time between published readings, s: conversionTimeS·averagingCount. */
export function powerMonitorUpdatePeriodS(cfg: PowerMonitorConfig): number {
  validatePowerMonitorConfig(cfg);
  return cfg.conversionTimeS * cfg.averagingCount;
}

// ---------------------------------------------------------------------------
// Electrical loss estimate from two power monitors
// ---------------------------------------------------------------------------

/**
 * Electrical loss estimate from an input and an output power monitor:
 * P̂loss = P̂in − P̂out (energy balance of the converter). NaN passes through,
 * so the estimate is NaN until both monitors have published.
 *
 * Error: with gain errors gIn, gOut and offsets oIn, oOut,
 * P̂loss − Ploss = gIn·Pin − gOut·Pout + (oIn − oOut) + noise + quantization.
 * The gain terms scale with the throughput, not with the loss: at efficiency η
 * (Pout = η·Pin) and |g| on each monitor the worst case is |g|·(1 + η)·Pin
 * against a true loss of (1 − η)·Pin — a relative error of |g|·(1 + η)/(1 − η),
 * e.g. 0.5 % gain error at η = 0.97 → up to 33 % of the loss.
 */
export function lossEstimateW(pinReadingW: number, poutReadingW: number): number {
  if (pinReadingW === Infinity || pinReadingW === -Infinity) {
    failCheck('lossEstimate.pinReadingW', 'must be finite or NaN (no reading yet)', pinReadingW);
  }
  if (poutReadingW === Infinity || poutReadingW === -Infinity) {
    failCheck('lossEstimate.poutReadingW', 'must be finite or NaN (no reading yet)', poutReadingW);
  }
  return pinReadingW - poutReadingW;
}

/**
 * Worst-case |P̂loss − Ploss| when only the magnitudes of the monitors' gain
 * errors and offsets are known (datasheet maxima), noise excluded:
 * |gIn|·|Pin| + |gOut|·|Pout| + |oIn| + |oOut| + (lsbIn + lsbOut)/2.
 * Grows linearly with the power passing through the converter.
 */
export function lossEstimateErrorBoundW(
  pinW: number,
  poutW: number,
  pinCfg: PowerMonitorConfig,
  poutCfg: PowerMonitorConfig,
): number {
  requireFinite('lossEstimateErrorBound.pinW', pinW);
  requireFinite('lossEstimateErrorBound.poutW', poutW);
  validatePowerMonitorConfig(pinCfg);
  validatePowerMonitorConfig(poutCfg);
  return (
    Math.abs(pinCfg.gainError) * Math.abs(pinW) +
    Math.abs(poutCfg.gainError) * Math.abs(poutW) +
    Math.abs(pinCfg.offsetW) +
    Math.abs(poutCfg.offsetW) +
    (pinCfg.lsbW + poutCfg.lsbW) / 2
  );
}

// ---------------------------------------------------------------------------
// Temperature sensor (first-order lag)
// ---------------------------------------------------------------------------

export interface TemperatureSensorConfig {
  /** Thermal time constant of the probe, s (≥ 0; 0 = no lag). */
  readonly tauS: number;
  /** Offset added to the reading, K. */
  readonly offsetK: number;
  /** RMS noise per reading, K (≥ 0). */
  readonly noiseRmsK: number;
  /** Quantization step of the reading, K (≥ 0; 0 = not quantized). */
  readonly lsbK: number;
}

export interface TemperatureSensor {
  readonly cfg: TemperatureSensorConfig;
  readonly rng: RandomSource;
  /** Lagged (probe) temperature y, K, before offset, noise and quantization. */
  lagK: number;
  /** Latest reading, K. */
  reading: number;
  /** Step length of the last update and its lag factor (steps mostly repeat: one exp saved per step). */
  lastDtS: number;
  lastAlpha: number;
}

export function validateTemperatureSensorConfig(cfg: TemperatureSensorConfig): void {
  if (cfg === null || typeof cfg !== 'object') failCheck('temperatureSensor', 'must be a config object', cfg);
  requireNonNegative('temperatureSensor.tauS', cfg.tauS);
  requireFinite('temperatureSensor.offsetK', cfg.offsetK);
  requireNonNegative('temperatureSensor.noiseRmsK', cfg.noiseRmsK);
  requireNonNegative('temperatureSensor.lsbK', cfg.lsbK);
}

function publishTemperature(s: TemperatureSensor): void {
  const cfg = s.cfg;
  const noiseK = cfg.noiseRmsK > 0 ? cfg.noiseRmsK * s.rng.normal() : 0;
  const valueK = s.lagK + cfg.offsetK + noiseK;
  s.reading = cfg.lsbK > 0 ? Math.round(valueK / cfg.lsbK) * cfg.lsbK : valueK;
}

/**
 * A sensor in equilibrium with `initialK` (lag state = initialK); its first
 * reading is taken at creation.
 */
export function createTemperatureSensor(
  cfg: TemperatureSensorConfig,
  rng: RandomSource,
  initialK: number,
): TemperatureSensor {
  validateTemperatureSensorConfig(cfg);
  if (rng === null || typeof rng !== 'object' || typeof rng.normal !== 'function') {
    failCheck('temperatureSensor.rng', 'must be a RandomSource with normal()', rng);
  }
  requireFinite('temperatureSensor.initialK', initialK);
  const s: TemperatureSensor = { cfg, rng, lagK: initialK, reading: Number.NaN, lastDtS: Number.NaN, lastAlpha: Number.NaN };
  publishTemperature(s);
  return s;
}

/**
 * Advance by dtS with the true temperature held at trueK, then take a reading.
 * Exact zero-order-hold discretization of τ·dy/dt = x − y:
 *     y ← y + (1 − e^(−dt/τ))·(x − y)
 * (τ = 0: y = x). Reading = quantize(y + offsetK + noise). dtS = 0 changes nothing.
 */
export function temperatureSensorStep(s: TemperatureSensor, trueK: number, dtS: number): void {
  if (!Number.isFinite(trueK)) failCheck('temperatureSensor.step.trueK', 'must be finite', trueK);
  if (!(dtS >= 0) || !Number.isFinite(dtS)) failCheck('temperatureSensor.step.dtS', 'must be finite and >= 0', dtS);
  if (dtS === 0) return;
  let alpha = s.lastAlpha;
  if (dtS !== s.lastDtS) {
    const tauS = s.cfg.tauS;
    alpha = tauS > 0 ? -Math.expm1(-dtS / tauS) : 1;
    s.lastDtS = dtS;
    s.lastAlpha = alpha;
  }
  s.lagK += alpha * (trueK - s.lagK);
  publishTemperature(s);
}

/** Latest reading, K. */
export function temperatureSensorReading(s: TemperatureSensor): number {
  return s.reading;
}

// ---------------------------------------------------------------------------
// Coolant heat meter
// ---------------------------------------------------------------------------

/**
 * Heat taken up by the coolant, W, from inlet/outlet temperature readings and
 * a mass-flow signal: Q = ṁ·cp·(Tout − Tin) — steady-flow energy balance of an
 * incompressible liquid without phase change (first law; e.g. Incropera et
 * al., Fundamentals of Heat and Mass Transfer, internal flow energy balance).
 *
 * Unlike the electrical loss estimate, the error does not scale with the
 * converter's throughput: an offset mismatch between the two temperature
 * sensors adds ṁ·cp·(offOut − offIn), a flow-signal gain error scales Q itself.
 */
export function coolantHeatW(
  massFlowKgPerS: number,
  cpJPerKgK: number,
  inletK: number,
  outletK: number,
): number {
  if (!(massFlowKgPerS >= 0) || !Number.isFinite(massFlowKgPerS)) {
    failCheck('coolantHeat.massFlowKgPerS', 'must be finite and >= 0', massFlowKgPerS);
  }
  if (!(cpJPerKgK > 0) || !Number.isFinite(cpJPerKgK)) {
    failCheck('coolantHeat.cpJPerKgK', 'must be finite and > 0', cpJPerKgK);
  }
  if (!Number.isFinite(inletK)) failCheck('coolantHeat.inletK', 'must be finite', inletK);
  if (!Number.isFinite(outletK)) failCheck('coolantHeat.outletK', 'must be finite', outletK);
  return massFlowKgPerS * cpJPerKgK * (outletK - inletK);
}
