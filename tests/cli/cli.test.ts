/**
 * End-to-end CLI behaviour. Most cases call `main()` in-process with captured output (each
 * spawned process pays ~1–2 s of TypeScript loading); a few spawn the real bin to check the
 * process exit codes and streams.
 */
import { mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { parse, stringify } from 'yaml';
import { HARDWARE_NOTICE } from '../../src/analysis/cautions.ts';
import { COMMANDS } from '../../src/cli/commands/index.ts';
import { buildProgram } from '../../src/cli/main.ts';
import { DEMO, ROOT, cli, spawnCli } from './helpers.ts';

const tmp = mkdtempSync(join(tmpdir(), 'lossdial-cli-'));
afterAll(() => rmSync(tmp, { recursive: true, force: true }));

type Doc = Record<string, any>;
const demoDoc = (): Doc => parse(readFileSync(join(ROOT, DEMO), 'utf8')) as Doc;

function writeCase(name: string, text: string): string {
  const file = join(tmp, name);
  writeFileSync(file, text);
  return file;
}

function variant(name: string, edit: (d: Doc) => void): string {
  const d = demoDoc();
  edit(d);
  return writeCase(name, stringify(d));
}

const REQUIRED_KEYS = [
  'dutyCycle', 'pinW', 'poutW', 'efficiency', 'totalLossW', 'semiconductorLossW', 'iPeakA', 'iValleyA', 'tjC',
  'fswHz', 'deadTimeS', 'vDriveV', 'regulated', 'voutV', 'heatToCoolantW', 'usefulHeatFraction', 'heatsinkC',
  'coolantOutC', 'status', 'capacitors', 'breakdown', 'cautions', 'energyBalanceResidual',
];
const DEVICE_KEYS = ['conductionW', 'diodeW', 'turnOnW', 'turnOffW', 'cossW', 'recoveryW', 'gateW', 'shootThroughW', 'totalW'];

describe('the lossdial process', () => {
  it('check on the demo case prints ok with its name and topology and exits 0', () => {
    const r = spawnCli(['check', DEMO]);
    expect(r.err).toBe('');
    expect(r.out).toBe('ok: buck-aux-48v (buck)\n');
    expect(r.code).toBe(0);
  });

  it('exits 2 with a message on stderr for an unknown command', () => {
    const r = spawnCli(['frobnicate']);
    expect(r.code).toBe(2);
    expect(r.out).toBe('');
    expect(r.err).toMatch(/unknown command 'frobnicate'/);
  });

  it('exits 2 naming the file when the scenario file does not exist', () => {
    const r = spawnCli(['point', 'cases/no-such-case.yaml']);
    expect(r.code).toBe(2);
    expect(r.err).toContain('cases/no-such-case.yaml');
    expect(r.err).toMatch(/no such file/);
  });
});

describe('check', () => {
  it('validates several files at once', async () => {
    const r = await cli('check', DEMO, DEMO);
    expect(r.code).toBe(0);
    expect(r.out.trim().split('\n')).toEqual(['ok: buck-aux-48v (buck)', 'ok: buck-aux-48v (buck)']);
  });

  const bad: Array<[string, () => string, RegExp[]]> = [
    ['an unknown key', () => variant('unknown-key.yaml', (d) => (d.pwm.fswHzz = 1e5)), [/^pwm\.fswHzz: unknown field/m]],
    ['a negative frequency', () => variant('neg-fsw.yaml', (d) => (d.pwm.fswHz = -1)), [/^pwm\.fswHz: .*\(unit: Hz\).*-1/m]],
    ['a wrong type', () => variant('wrong-type.yaml', (d) => (d.pwm.deadTimeS = 'short')), [/^pwm\.deadTimeS: .*number.*\(unit: s\).*"short"/m]],
    ['an unknown part', () => variant('unknown-part.yaml', (d) => (d.devices.lowSide.part = 'xx-9000')), [/^devices\.lowSide\.part: unknown part "xx-9000"; known parts: ld-si100-3m/m]],
    ['a YAML syntax error', () => writeCase('syntax.yaml', 'name: x\npwm: { fswHz: 1e5\n'), [/^\(syntax\): line \d+/m]],
    ['several problems', () => variant('several.yaml', (d) => { d.pwm.fswHz = 0; d.buck.inductor.lH = -1e-6; }), [/^pwm\.fswHz: .*\(unit: Hz\)/m, /^buck\.inductor\.lH: .*\(unit: H\)/m]],
  ];
  for (const [what, make, patterns] of bad) {
    it(`exits 2 on ${what}, naming the file, the path and the unit`, async () => {
      const file = make();
      const r = await cli('check', file);
      expect(r.code).toBe(2);
      expect(r.out).toBe('');
      expect(r.err).toContain(file);
      for (const p of patterns) expect(r.err).toMatch(p);
    });
  }

  it('exits 2 naming the path of a missing file', async () => {
    const file = join(tmp, 'missing.yaml');
    const r = await cli('check', file);
    expect(r.code).toBe(2);
    expect(r.err).toBe(`cannot read ${file}: no such file or directory\n`);
  });

  it('reports a bad file among good ones and still checks the rest', async () => {
    const badFile = variant('neg-fsw-2.yaml', (d) => (d.pwm.fswHz = -1));
    const r = await cli('check', badFile, DEMO);
    expect(r.code).toBe(2);
    expect(r.out).toBe('ok: buck-aux-48v (buck)\n');
    expect(r.err).toContain(badFile);
  });
});

describe('point', () => {
  it('--json prints a record with every required key and a closed energy balance', async () => {
    const r = await cli('point', DEMO, '--json');
    expect(r.code).toBe(0);
    const rec = JSON.parse(r.out);
    for (const k of REQUIRED_KEYS) expect(rec, k).toHaveProperty(k);
    expect(Object.keys(rec.tjC)).toEqual(['highSide', 'lowSide']);
    for (const side of ['highSide', 'lowSide']) for (const k of DEVICE_KEYS) expect(rec.breakdown[side], `${side}.${k}`).toHaveProperty(k);
    for (const k of ['inductorCopperW', 'inductorCoreW', 'capOutW', 'capInW', 'gateDriverW']) expect(rec.breakdown).toHaveProperty(k);
    for (const c of ['output', 'input']) expect(Object.keys(rec.capacitors[c])).toEqual(['rmsA', 'ratingA', 'lossW']);
    expect(rec.energyBalanceResidual).toBeLessThan(1e-9);
    expect(rec.pinW).toBeCloseTo(rec.poutW + rec.totalLossW, 6);
    expect(rec.status).toBe('ok');
    expect(Array.isArray(rec.cautions)).toBe(true);
  });

  it('--set pwm.fswHz=300e3 raises the semiconductor loss', async () => {
    const base = JSON.parse((await cli('point', DEMO, '--json')).out);
    const fast = JSON.parse((await cli('point', DEMO, '--set', 'pwm.fswHz=300e3', '--json')).out);
    expect(fast.fswHz).toBe(300e3);
    expect(fast.semiconductorLossW).toBeGreaterThan(base.semiconductorLossW);
  });

  it('applies repeated --set in order and validates the result', async () => {
    const r = await cli('point', DEMO, '--set', 'pwm.fswHz=200e3', '--set', 'gateDrive.vDriveV=8', '--json');
    const rec = JSON.parse(r.out);
    expect([rec.fswHz, rec.vDriveV]).toEqual([200e3, 8]);
  });

  it('exits 2 naming the field, the value and the unit when --set makes the scenario invalid', async () => {
    const r = await cli('point', DEMO, '--set', 'pwm.fswHz=-5');
    expect(r.code).toBe(2);
    expect(r.out).toBe('');
    expect(r.err).toMatch(/--set pwm\.fswHz=-5/);
    expect(r.err).toMatch(/^pwm\.fswHz: .*\(unit: Hz\), got -5$/m);
  });

  it('exits 2 on a --set without "=" and on an unknown field', async () => {
    expect((await cli('point', DEMO, '--set', 'pwm.fswHz')).err).toMatch(/expected path=value/);
    const r = await cli('point', DEMO, '--set', 'pwm.fsw=1');
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/^pwm\.fsw: unknown field/m);
  });

  it('prints a readable table with losses by device, temperatures, ripple and heat', async () => {
    const r = await cli('point', DEMO);
    expect(r.code).toBe(0);
    for (const s of ['Power', 'efficiency', 'Losses by device (W)', 'high side', 'low side', 'Junction (°C)', 'Passive losses', 'Ripple', 'Capacitors', 'Heat', 'to coolant'])
      expect(r.out).toContain(s);
  });

  it('prints the cautions and the hardware notice after the table when a limit is crossed', async () => {
    const r = await cli('point', DEMO, '--set', 'buck.outputCap.rippleRatingA=0.1');
    expect(r.code).toBe(0);
    const tail = r.out.slice(r.out.indexOf('Cautions'));
    expect(tail).toMatch(/danger\s+capRipple\s+output capacitor ripple/);
    expect(r.out.trimEnd().endsWith(HARDWARE_NOTICE)).toBe(true);
  });

  it('prints no cautions block when no limit is crossed', async () => {
    const r = await cli('point', DEMO, '--json');
    if (JSON.parse(r.out).cautions.length > 0) return; // the demo point itself is flagged: nothing to check
    expect((await cli('point', DEMO)).out).not.toContain(HARDWARE_NOTICE);
  });
});

describe('sweep', () => {
  const args = ['sweep', DEMO, '--param', 'pwm.fswHz', '--from', '50e3', '--to', '400e3', '--steps', '4'];

  it('--csv prints a header with dotted keys and one line per point', async () => {
    const r = await cli(...args, '--csv');
    expect(r.code).toBe(0);
    const lines = r.out.trimEnd().split('\n');
    expect(lines).toHaveLength(4 + 1);
    const header = lines[0].split(',');
    expect(header.slice(0, 2)).toEqual(['param', 'value']);
    for (const k of ['dutyCycle', 'totalLossW', 'tjC.highSide', 'tjC.lowSide', 'breakdown.highSide.turnOffW', 'capacitors.output.rmsA', 'cautions', 'energyBalanceResidual'])
      expect(header).toContain(k);
    const value = header.indexOf('value');
    expect(lines.slice(1).map((l) => Number(l.split(',')[value]))).toEqual([50e3, 166666.66666666666, 283333.3333333333, 400e3]);
  });

  it('--csv lists caution codes joined with ";" and keeps the notice on stderr', async () => {
    const r = await cli(...args, '--csv', '--set', 'buck.outputCap.rippleRatingA=0.1', '--set', 'buck.inputCap.rippleRatingA=0.1');
    const [header, first] = r.out.split('\n');
    const col = header.split(',').indexOf('cautions');
    expect(first.split(',')[col].split(';').filter((c) => c === 'capRipple')).toHaveLength(2);
    expect(r.err).toContain(HARDWARE_NOTICE);
  });

  it('--log spaces the points geometrically with exact end points', async () => {
    const r = await cli('sweep', DEMO, '--param', 'pwm.fswHz', '--from', '20e3', '--to', '320e3', '--steps', '5', '--log', '--json');
    const doc = JSON.parse(r.out);
    expect(doc.spacing).toBe('log');
    const vs = doc.rows.map((row: { value: number }) => row.value);
    expect(vs[0]).toBe(20e3);
    expect(vs[4]).toBe(320e3);
    vs.slice(1, 4).forEach((v: number, i: number) => expect(v).toBeCloseTo(20e3 * 2 ** (i + 1), 6));
  });

  it('--json rows carry the point record keys plus param and value', async () => {
    const r = await cli(...args, '--json');
    const doc = JSON.parse(r.out);
    expect(doc.rows).toHaveLength(4);
    for (const row of doc.rows) {
      expect(row.param).toBe('pwm.fswHz');
      expect(row.fswHz).toBe(row.value);
      for (const k of REQUIRED_KEYS) expect(row).toHaveProperty(k);
    }
  });

  it('the human table has a row per value', async () => {
    const r = await cli(...args);
    expect(r.code).toBe(0);
    const lines = r.out.split('\n');
    expect(lines[1]).toMatch(/pwm\.fswHz\s+eff %\s+loss W\s+semi W\s+passive W\s+Tj max °C\s+iValley A\s+cautions/);
    expect(lines.slice(2, 6).map((l) => l.trim().split(/\s+/)[0])).toEqual(['50000', '166667', '283333', '400000']);
  });

  it('exits 2 naming a bad --param path', async () => {
    const r = await cli('sweep', DEMO, '--param', 'pwm.fsw', '--from', '1', '--to', '2', '--steps', '2');
    expect(r.code).toBe(2);
    expect(r.out).toBe('');
    expect(r.err).toMatch(/--param pwm\.fsw/);
    expect(r.err).toMatch(/^pwm\.fsw: unknown field/m);
  });

  it('exits 2 naming a value the schema rejects, before computing anything', async () => {
    const r = await cli('sweep', DEMO, '--param', 'pwm.deadTimeS', '--from', '0', '--to', '5e-6', '--steps', '3');
    expect(r.code).toBe(2);
    expect(r.out).toBe('');
    expect(r.err).toMatch(/^pwm\.deadTimeS: .*at pwm\.deadTimeS = 0\.0000025/m);
  });

  it('exits 2 on bad numbers, steps, log bounds and conflicting formats', async () => {
    const cases: Array<[string[], RegExp]> = [
      [['--from', 'abc', '--to', '2', '--steps', '2'], /--from must be a finite number.*"abc"/],
      [['--from', '1', '--to', '2', '--steps', '0'], /--steps must be a whole number/],
      [['--from', '1', '--to', '2', '--steps', '2.5'], /--steps must be a whole number/],
      [['--from', '0', '--to', '2', '--steps', '2', '--log'], /log sweep needs positive bounds/],
      [['--from', '1', '--to', '2', '--steps', '2', '--csv', '--json'], /cannot be used with/],
    ];
    for (const [extra, pattern] of cases) {
      const r = await cli('sweep', DEMO, '--param', 'pwm.fswHz', ...extra);
      expect(r.code, extra.join(' ')).toBe(2);
      expect(r.err).toMatch(pattern);
    }
    const missing = await cli('sweep', DEMO, '--from', '1', '--to', '2', '--steps', '2');
    expect(missing.code).toBe(2);
    expect(missing.err).toMatch(/required option '--param <path>'/);
  });

  it('--out writes the file atomically and leaves no temporary file', async () => {
    const dir = mkdtempSync(join(tmp, 'out-'));
    const file = join(dir, 'sweep.csv');
    const r = await cli(...args, '--csv', '--out', file);
    expect(r.code).toBe(0);
    expect(r.out).toBe('');
    expect(readFileSync(file, 'utf8').split('\n')[0]).toMatch(/^param,value,/);
    expect(readdirSync(dir)).toEqual(['sweep.csv']);
    const bad = await cli(...args, '--csv', '--out', join(dir, 'nope', 'x.csv'));
    expect(bad.code).toBe(2);
    expect(bad.err).toMatch(/cannot write .*x\.csv: no such file or directory/);
  });
});

describe('schema', () => {
  it('prints a JSON Schema that matches the committed cases/scenario.schema.json', async () => {
    const r = await cli('schema');
    expect(r.code).toBe(0);
    const schema = JSON.parse(r.out);
    expect(schema.properties.pwm.properties.fswHz.description).toContain('unit: Hz');
    expect(schema.properties.devices.properties.highSide.properties.part.enum).toContain('ld-si100-3m');
    const committed = readFileSync(join(ROOT, 'cases/scenario.schema.json'), 'utf8');
    expect(r.out === committed, 'cases/scenario.schema.json is stale: run `npm run schema` and commit it').toBe(true);
  });
});

describe('usage', () => {
  // Every command in COMMANDS, so commands added later are covered without editing this test.
  const commandNames = buildProgram({ out: () => {}, err: () => {} }).commands.map((c) => c.name());

  it('every registered command has its own --help, exit 0', async () => {
    expect(commandNames).toEqual(expect.arrayContaining(['check', 'point', 'sweep', 'schema']));
    expect(commandNames).toHaveLength(COMMANDS.length);
    for (const name of commandNames) {
      const r = await cli(name, '--help');
      expect(r.code, name).toBe(0);
      expect(r.out).toMatch(new RegExp(`^Usage: lossdial ${name} `));
    }
  });

  it('--help and --version exit 0; no command, an unknown option or a missing argument exit 2', async () => {
    expect((await cli('--help')).code).toBe(0);
    expect((await cli('--version')).out).toMatch(/^\d+\.\d+\.\d+\n$/);
    const none = await cli();
    expect(none.code).toBe(2);
    expect(none.err).toMatch(/^Usage: lossdial/);
    const unknown = await cli('point', DEMO, '--bogus');
    expect(unknown.code).toBe(2);
    expect(unknown.err).toMatch(/unknown option '--bogus'/);
    const missing = await cli('point');
    expect(missing.code).toBe(2);
    expect(missing.err).toMatch(/missing required argument 'file'/);
  });
});
