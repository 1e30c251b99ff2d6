/**
 * The scenario schema: one source of truth for field names, units, bounds and defaults.
 * Every field carries its SI unit in its name; unknown keys are rejected everywhere.
 */
import { z } from 'zod';

const pos = () => z.number().finite().positive();
const nonneg = () => z.number().finite().nonnegative();
const finite = () => z.number().finite();
const fraction = () => z.number().finite().min(0).max(1);

/**
 * Profile: a constant, or breakpoints `[[tS, value], ...]` held (step) or interpolated (ramp). A
 * ramp may carry `holds`: from the first of their times on, the ramp gives way to those held
 * values (how a live session's changes on a ramp are saved, exactly as they were applied).
 */
const breakpoints = z
  .array(z.tuple([nonneg(), finite()]))
  .min(1)
  .refine((pts) => pts.every((p, i) => i === 0 || p[0] > pts[i - 1][0]), {
    message: 'breakpoint times must be strictly increasing',
  });
export const profileSchema = z.union([
  finite(),
  z.object({ step: breakpoints }).strict(),
  z.object({ ramp: breakpoints, holds: breakpoints.optional() }).strict(),
]);

/** Device parameters (all optional here: a part from the library fills the rest). */
export const deviceFields = {
  vdsRatedV: pos(),
  kAPerV2: pos().describe('square-law transconductance parameter k at 25 °C'),
  vth25V: pos(),
  vthTempCoeffVPerK: finite().max(0),
  rSeries25Ohm: nonneg().describe('drift + package resistance in series with the channel'),
  rdsTempCoeffPerK: nonneg().max(0.05).describe('α in R(Tj) = R25·(1+α)^(Tj−25)'),
  lambdaPerV: pos().max(1).describe('channel-length modulation in saturation'),
  cissF: pos(),
  qgdCoulomb: pos(),
  qgdRefV: pos(),
  qgCoulomb: pos().describe('total gate charge at qgRefV drive'),
  qgRefV: pos(),
  rGateIntOhm: nonneg(),
  cossF: pos().describe('energy-related output capacitance (Cds + Cgd)'),
  diodeVf25V: pos(),
  diodeROhm: nonneg(),
  diodeVfTempCoeffVPerK: finite().max(0),
  qrr25Coulomb: nonneg(),
  qrrRefA: pos(),
  qrrTempCoeffPerK: nonneg(),
  tjMaxC: z.number().finite().min(50).max(250),
} as const;
export const devicePartSchema = z.object({ label: z.string(), ...deviceFields }).strict();
export const deviceRefSchema = z
  .object({ part: z.string().min(1), ...Object.fromEntries(Object.entries(deviceFields).map(([k, v]) => [k, v.optional()])) })
  .strict() as z.ZodType<{ part: string } & Partial<Record<keyof typeof deviceFields, number>>>;

const junctionCaseSchema = z.discriminatedUnion('kind', [
  z.object({ kind: z.literal('foster'), rKPerW: z.array(pos()).min(1), tauS: z.array(pos()).min(1) }).strict(),
  z.object({ kind: z.literal('cauer'), rKPerW: z.array(pos()).min(1), cJPerK: z.array(pos()).min(1) }).strict(),
]);
const deviceThermalSchema = z
  .object({ junctionCase: junctionCaseSchema, caseSinkKPerW: pos() })
  .strict()
  .refine(
    (d) => d.junctionCase.rKPerW.length === (d.junctionCase.kind === 'foster' ? d.junctionCase.tauS : d.junctionCase.cJPerK).length,
    { message: 'junctionCase: rKPerW and tauS/cJPerK must have the same length', path: ['junctionCase'] },
  );

const capacitorSchema = z
  .object({
    cF: pos(),
    esrOhm: nonneg(),
    rippleRatingA: pos().describe('RMS ripple-current rating'),
  })
  .strict();

const coreSchema = z
  .object({
    kiSI: pos().describe('iGSE k_i (SI units, ΔB peak-to-peak in T)'),
    alpha: z.number().min(1).max(3),
    beta: z.number().min(1.5).max(4),
    aeM2: pos(),
    turns: z.number().int().positive(),
    volumeM3: pos(),
    bSatT: pos().default(0.35).describe('flux density at which the core saturates (ferrite ≈ 0.3–0.4 T)'),
  })
  .strict();

const inductorSchema = z
  .object({
    lH: pos(),
    dcr20Ohm: nonneg(),
    core: coreSchema.optional(),
    tempC: finite().default(60).describe('winding temperature used for DCR(T)'),
  })
  .strict();

const buckSchema = z
  .object({
    vinV: pos(),
    voutRefV: pos(),
    inductor: inductorSchema,
    outputCap: capacitorSchema,
    inputCap: capacitorSchema,
    load: z.union([z.object({ rOhm: pos() }).strict(), z.object({ iA: nonneg() }).strict()]),
  })
  .strict()
  .refine((b) => b.voutRefV < b.vinV, { message: 'voutRefV must be below vinV for a buck', path: ['voutRefV'] });

const halfBridgeSchema = z
  .object({
    vdcV: pos(),
    rSourceOhm: nonneg().default(0.05),
    linkCap: capacitorSchema,
    load: z.object({ rOhm: pos(), lH: pos(), backEmfV: finite().default(0) }).strict(),
    reference: z.discriminatedUnion('kind', [
      z.object({ kind: z.literal('dc'), iA: finite() }).strict(),
      z.object({ kind: z.literal('sine'), amplitudeA: nonneg(), freqHz: pos(), offsetA: finite().default(0) }).strict(),
    ]),
  })
  .strict();

const thermalSchema = z
  .object({
    devices: z.object({ highSide: deviceThermalSchema, lowSide: deviceThermalSchema }).strict(),
    heatsink: z
      .object({ cthJPerK: pos(), rSinkCoolantKPerW: pos(), rSinkAmbientKPerW: pos().default(20) })
      .strict(),
    coolant: z
      .object({ inletC: finite(), flowKgPerS: nonneg(), cpJPerKgK: pos().default(3400), massKg: pos().default(0.2) })
      .strict(),
    ambientC: finite().default(25),
    passiveToPlateFraction: fraction()
      .default(0.3)
      .describe('share of inductor and capacitor loss that reaches the cold plate'),
  })
  .strict();

const limitsSchema = z
  .object({
    tjMarginK: nonneg().default(15),
    runawayTjC: finite().default(250).describe('junction temperature at which a run is stopped as thermal runaway'),
    minOverdriveV: nonneg().default(1.5).describe('gate drive above worst-case threshold required at the operating current'),
    vthSpreadV: nonneg().default(0.3).describe('threshold spread allowed for between parts'),
  })
  .strict();

const controlSchema = z
  .object({
    sampling: z
      .discriminatedUnion('mode', [
        z.object({ mode: z.literal('perPwm'), divider: z.number().int().min(1).default(1) }).strict(),
        z.object({ mode: z.literal('fixed'), rateHz: pos() }).strict(),
      ])
      .default({ mode: 'perPwm', divider: 1 }),
    delaySamples: z.number().int().min(0).max(8).default(1),
    basis: z.enum(['continuous', 'perSample']).default('continuous'),
    kp: nonneg().describe('proportional gain (duty per volt or per ampere)'),
    ki: nonneg().describe('continuous basis: 1/s·(duty per unit); perSample basis: per-sample coefficient'),
    antiWindup: z.enum(['clamp', 'backCalc']).default('clamp'),
    backCalcGain: fraction().default(0.2),
    sensorFilterHz: pos().optional().describe('first-order anti-alias filter on the feedback'),
  })
  .strict();

const simSchema = z
  .object({
    durationS: pos().default(1),
    recordIntervalS: pos().default(0.1),
    thermalStepS: pos().default(0.001),
    engine: z.enum(['auto', 'odex', 'zoh']).default('auto'),
    seed: z.number().int().min(0).default(1),
  })
  .strict();

const profilesSchema = z
  .object({
    heatDemandW: profileSchema.optional(),
    loadROhm: profileSchema.optional(),
    loadIA: profileSchema.optional(),
    vinV: profileSchema.optional(),
    inletC: profileSchema.optional(),
    flowKgPerS: profileSchema.optional(),
    iRefA: profileSchema.optional(),
    fswHz: profileSchema.optional(),
    deadTimeS: profileSchema.optional(),
    vDriveV: profileSchema.optional(),
    controlKp: profileSchema.optional(),
    controlKi: profileSchema.optional(),
    supervisorOn: profileSchema.optional().describe('1 = supervisor drives the knobs, 0 = manual knobs from the fswHz/deadTimeS/vDriveV profiles'),
  })
  .strict();

const supervisorSchema = z
  .object({
    enabled: z.boolean().default(true),
    tickS: pos().default(0.005),
    controlled: z.enum(['electricalLoss', 'semiconductorLoss', 'coolantHeat']).default('electricalLoss'),
    fsw: z.object({ enabled: z.boolean().default(true), minHz: pos(), maxHz: pos(), slewHzPerS: pos(), stepHz: nonneg().default(0) }).strict(),
    deadTime: z.object({ enabled: z.boolean().default(true), minS: nonneg(), maxS: pos(), slewSPerS: pos(), stepS: nonneg().default(0) }).strict(),
    gateDrive: z.object({ enabled: z.boolean().default(false), minV: pos(), maxV: pos(), slewVPerS: pos(), stepV: nonneg().default(0) }).strict(),
    trimKiPerS: nonneg().default(0.5).describe('integral trim gain on the measured loss error (W of correction per W·s)'),
    pmFloorDeg: nonneg().default(45),
    gmFloorDb: nonneg().default(6),
    stableBandHz: z.tuple([pos(), pos()]).optional().describe('configured stable fsw band when no margin map is used'),
  })
  .strict();

const powerMonitorSchema = z
  .object({
    conversionTimeS: pos().default(1.1e-3),
    averagingCount: z.number().int().min(1).max(1024).default(4),
    lsbW: pos().default(0.02),
    gainError: z.number().min(-0.1).max(0.1).default(0.002),
    offsetW: finite().default(0),
    noiseRmsW: nonneg().default(0.05),
  })
  .strict();
const tempSensorSchema = z
  .object({ tauS: pos().default(2), offsetK: finite().default(0), noiseRmsK: nonneg().default(0.05), lsbK: pos().default(0.0625) })
  .strict();
const sensorsSchema = z
  .object({
    inputPower: powerMonitorSchema.prefault({}),
    outputPower: powerMonitorSchema.prefault({}),
    coolantTemp: tempSensorSchema.prefault({}),
  })
  .strict();

export const scenarioSchema = z
  .object({
    $schema: z.string().optional(),
    version: z.literal(1).default(1),
    name: z.string().min(1),
    description: z.string().default(''),
    topology: z.enum(['buck', 'halfBridge']),
    pwm: z
      .object({
        fswHz: pos(),
        deadTimeS: nonneg(),
        lowSideMode: z.enum(['sync', 'diode']).default('sync'),
        dutyMin: fraction().default(0),
        dutyMax: fraction().default(0.98),
      })
      .strict(),
    gateDrive: z
      .object({
        vDriveV: pos(),
        vOffV: z.number().finite().max(0).default(0),
        rDriverOnOhm: nonneg().default(1.5),
        rDriverOffOhm: nonneg().default(0.8),
        rGateExtOhm: nonneg().default(2),
        skewS: finite().default(0).describe('driver propagation mismatch; positive delays the turn-off edge'),
      })
      .strict(),
    layout: z.object({ commutationLoopH: pos().default(5e-9) }).strict().prefault({}),
    devices: z.object({ highSide: deviceRefSchema, lowSide: deviceRefSchema }).strict(),
    buck: buckSchema.optional(),
    halfBridge: halfBridgeSchema.optional(),
    thermal: thermalSchema,
    limits: limitsSchema.prefault({}),
    control: controlSchema.optional(),
    sim: simSchema.prefault({}),
    profiles: profilesSchema.prefault({}),
    supervisor: supervisorSchema.optional(),
    sensors: sensorsSchema.prefault({}),
  })
  .strict()
  .superRefine((s, ctx) => {
    if (s.topology === 'buck' && !s.buck) ctx.addIssue({ code: 'custom', path: ['buck'], message: 'required when topology is buck' });
    if (s.topology === 'halfBridge' && !s.halfBridge)
      ctx.addIssue({ code: 'custom', path: ['halfBridge'], message: 'required when topology is halfBridge' });
    if (s.topology === 'buck' && s.halfBridge)
      ctx.addIssue({ code: 'custom', path: ['halfBridge'], message: 'not allowed when topology is buck' });
    if (s.topology === 'halfBridge' && s.buck)
      ctx.addIssue({ code: 'custom', path: ['buck'], message: 'not allowed when topology is halfBridge' });
    if (s.pwm.dutyMin >= s.pwm.dutyMax) ctx.addIssue({ code: 'custom', path: ['pwm', 'dutyMin'], message: 'must be below pwm.dutyMax' });
    if (s.pwm.deadTimeS * s.pwm.fswHz >= 0.25)
      ctx.addIssue({ code: 'custom', path: ['pwm', 'deadTimeS'], message: `dead time is ${(100 * s.pwm.deadTimeS * s.pwm.fswHz).toFixed(1)} % of the period; must be below 25 %` });
    const sup = s.supervisor;
    if (sup) {
      const pairs: Array<[string, number, number]> = [
        ['fsw', sup.fsw.minHz, sup.fsw.maxHz],
        ['deadTime', sup.deadTime.minS, sup.deadTime.maxS],
        ['gateDrive', sup.gateDrive.minV, sup.gateDrive.maxV],
      ];
      for (const [k, lo, hi] of pairs)
        if (!(lo < hi)) ctx.addIssue({ code: 'custom', path: ['supervisor', k], message: `minimum must be below maximum, got ${lo} ≥ ${hi}` });
    }
  });

export type ScenarioInput = z.input<typeof scenarioSchema>;
export type ScenarioParsed = z.output<typeof scenarioSchema>;
export type ProfileSpec = z.output<typeof profileSchema>;
export type DevicePart = z.output<typeof devicePartSchema>;
