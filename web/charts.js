// @ts-check
/**
 * Live charts: a bounded store of the session's decimated records and six plotly charts drawn
 * from it at a few redraws a second (data arrives with every frame; drawing every frame would
 * cost more than it shows).
 */

/** @type {any} */
const Plotly = /** @type {any} */ (globalThis).Plotly;

const MAX_POINTS = 6000;

export const COLORS = {
  demand: '#2f3e46',
  heat: '#d9480f',
  measured: '#e8a317',
  target: '#7b5e7b',
  vout: '#13877a',
  ref: '#2f3e46',
  fsw: '#2463a8',
  dead: '#a23b72',
  vdrive: '#4d8b31',
  tjHs: '#c1121f',
  tjLs: '#f07c22',
  sink: '#6a4c93',
  coolant: '#1f7fbf',
  inlet: '#7cae3b',
  lossHs: '#c1121f',
  lossLs: '#f07c22',
  lossPassive: '#6a4c93',
  lossGate: '#1f7fbf',
  pm: '#13877a',
  gm: '#2463a8',
  floor: '#b3261e',
};

/** Column store with decimation by two when full. */
export class SeriesStore {
  constructor() {
    /** @type {Record<string, Array<number|null>>} */
    this.cols = {};
    this.n = 0;
    /** @type {{tS:number[], pmDeg:Array<number|null>, gmDb:Array<number|null>}} */
    this.margin = { tS: [], pmDeg: [], gmDb: [] };
    this.version = 0;
  }

  clear() {
    this.cols = {};
    this.n = 0;
    this.margin = { tS: [], pmDeg: [], gmDb: [] };
    this.version++;
  }

  /** @param {Record<string, Array<number|null>>} records */
  append(records) {
    const t = records.tS;
    if (!t || t.length === 0) return;
    for (const [k, v] of Object.entries(records)) {
      if (!this.cols[k]) this.cols[k] = new Array(this.n).fill(null);
      this.cols[k].push(...v);
    }
    this.n += t.length;
    for (const col of Object.values(this.cols)) while (col.length < this.n) col.push(null);
    if (this.n > MAX_POINTS) {
      for (const k of Object.keys(this.cols)) this.cols[k] = this.cols[k].filter((_, i) => i % 2 === 1 || i === this.n - 1);
      this.n = this.cols.tS.length;
    }
    this.version++;
  }

  /** @param {{tS:number, pmDeg:number|null, gmDb:number|null}|null} m */
  appendMargin(m) {
    if (!m) return;
    const ts = this.margin.tS;
    if (ts.length > 0 && ts[ts.length - 1] >= m.tS) return;
    ts.push(m.tS);
    this.margin.pmDeg.push(m.pmDeg);
    this.margin.gmDb.push(m.gmDb);
    if (ts.length > MAX_POINTS) {
      const keep = (/** @type {any[]} */ a) => a.filter((_, i) => i % 2 === 1);
      this.margin = { tS: keep(ts), pmDeg: keep(this.margin.pmDeg), gmDb: keep(this.margin.gmDb) };
    }
    this.version++;
  }

  /** @param {string} k @param {(x:number)=>number} [f] */
  col(k, f) {
    const c = this.cols[k] ?? [];
    // Always a fresh array: plotly's react() compares data arrays by reference.
    return f ? c.map((x) => (x === null ? null : f(x))) : c.slice();
  }
}

const BASE_LAYOUT = {
  margin: { l: 58, r: 16, t: 8, b: 36 },
  font: { family: 'Segoe UI, Helvetica Neue, Arial, sans-serif', size: 11, color: '#1f2a30' },
  paper_bgcolor: '#ffffff',
  plot_bgcolor: '#fbfaf7',
  legend: { orientation: 'h', x: 0, y: 1.02, yanchor: 'bottom', font: { size: 10 }, bgcolor: 'rgba(0,0,0,0)' },
  uirevision: 'keep',
  hovermode: 'x unified',
};

const CONFIG = { displayModeBar: false, responsive: true, displaylogo: false };

/** @param {string} title @param {string} unitTitle */
function axis(title, unitTitle) {
  return { title: { text: `${title} (${unitTitle})`, font: { size: 11 } }, gridcolor: '#e6e1d6', zerolinecolor: '#cfc8b8', automargin: true };
}

/**
 * @param {string} name @param {any[]} x @param {any[]} y @param {string} color
 * @param {Record<string, any>} [extra]
 */
function line(name, x, y, color, extra = {}) {
  const { line: l = {}, ...rest } = extra;
  return { type: 'scatter', mode: 'lines', name, x, y, ...rest, line: { color, width: 1.8, ...l } };
}

/** @param {string} id @param {string} text */
function setTitle(id, text) {
  const el = document.getElementById(id);
  if (el && el.textContent !== text) el.textContent = text;
}

export class LiveCharts {
  /** @param {SeriesStore} store */
  constructor(store) {
    this.store = store;
    this.drawn = -1;
    this.meta = { regulatedName: 'output voltage', regulatedUnit: 'V', tjLimitC: NaN, pmFloorDeg: 45, loadKind: 'rOhm' };
    this.ids = ['chart-heat', 'chart-reg', 'chart-act', 'chart-temp', 'chart-loss', 'chart-margin'];
    this.ready = false;
  }

  /** @param {Partial<LiveCharts['meta']>} m */
  setMeta(m) {
    Object.assign(this.meta, m);
    this.drawn = -1;
  }

  /** Redraw when the data changed (call from requestAnimationFrame at a few Hz). */
  draw(force = false) {
    if (!Plotly) return;
    const s = this.store;
    if (!force && s.version === this.drawn) return;
    this.drawn = s.version;
    const t = s.col('tS');
    const tEnd = t.length > 0 ? /** @type {number} */ (t[t.length - 1]) : 1;
    const xTime = { ...axis('simulated time', 's') };
    const M = this.meta;

    const heat = [
      line('demand', t, s.col('demandW'), COLORS.demand, { line: { dash: 'dash', shape: 'hv' } }),
      line('heat to coolant', t, s.col('heatToCoolantW'), COLORS.heat, { line: { width: 2.4 } }),
      line('measured loss', t, s.col('measuredW'), COLORS.measured),
      line('supervisor target', t, s.col('targetW'), COLORS.target, { line: { dash: 'dot' } }),
    ];
    this.plot('chart-heat', heat, { xaxis: xTime, yaxis: axis('power', 'W') });

    const reg = [
      line(`${M.regulatedName}`, t, s.col('yMeasured'), COLORS.vout),
      line('reference', t, s.col('reference'), COLORS.ref, { line: { dash: 'dash' } }),
    ];
    this.plot('chart-reg', reg, { xaxis: xTime, yaxis: { ...axis(M.regulatedName, M.regulatedUnit), tickformat: '.4~f' } });
    setTitle('title-reg', `Regulation: ${M.regulatedName} vs reference`);

    const act = [
      line('switching frequency', t, s.col('fswHz', (x) => x / 1000), COLORS.fsw, { line: { shape: 'hv' } }),
      line('dead time', t, s.col('deadTimeS', (x) => x * 1e9), COLORS.dead, { yaxis: 'y2', line: { shape: 'hv' } }),
      line('gate drive', t, s.col('vDriveV'), COLORS.vdrive, { yaxis: 'y3', line: { shape: 'hv' } }),
    ];
    this.plot('chart-act', act, {
      xaxis: { ...xTime, domain: [0, 0.82] },
      yaxis: { ...axis('switching frequency', 'kHz'), title: { text: 'switching frequency (kHz)', font: { size: 11, color: COLORS.fsw } }, tickfont: { color: COLORS.fsw } },
      yaxis2: { ...axis('dead time', 'ns'), title: { text: 'dead time (ns)', font: { size: 11, color: COLORS.dead } }, overlaying: 'y', side: 'right', anchor: 'x', showgrid: false, tickfont: { color: COLORS.dead }, automargin: false },
      yaxis3: { ...axis('gate drive', 'V'), title: { text: 'gate drive (V)', font: { size: 11, color: COLORS.vdrive } }, overlaying: 'y', side: 'right', anchor: 'free', position: 1, showgrid: false, tickfont: { color: COLORS.vdrive }, automargin: false },
      margin: { ...BASE_LAYOUT.margin, r: 44 },
    });

    // The limit line only once a junction comes within 40 K of it (else it squashes the curves).
    const tjPeak = Math.max(...s.col('tjHsC').map((x) => x ?? -Infinity), ...s.col('tjLsC').map((x) => x ?? -Infinity));
    const shapes = Number.isFinite(M.tjLimitC) && tjPeak > M.tjLimitC - 40
      ? [{ type: 'line', xref: 'paper', x0: 0, x1: 1, y0: M.tjLimitC, y1: M.tjLimitC, line: { color: COLORS.floor, width: 1, dash: 'dash' } }]
      : [];
    const temp = [
      line('junction, high side', t, s.col('tjHsC'), COLORS.tjHs),
      line('junction, low side', t, s.col('tjLsC'), COLORS.tjLs),
      line('heatsink', t, s.col('heatsinkC'), COLORS.sink),
      line('coolant', t, s.col('coolantC'), COLORS.coolant),
      line('inlet', t, s.col('inletC'), COLORS.inlet, { line: { dash: 'dot' } }),
    ];
    this.plot('chart-temp', temp, { xaxis: xTime, yaxis: axis('temperature', '°C'), shapes });
    setTitle('title-temp', Number.isFinite(M.tjLimitC)
      ? `Temperatures — junction limit − margin ${M.tjLimitC.toFixed(0)} °C${shapes.length ? ' (dashed)' : `, peak so far ${Number.isFinite(tjPeak) ? tjPeak.toFixed(1) : '—'} °C`}`
      : 'Temperatures');

    const stack = (/** @type {string} */ name, /** @type {string} */ col, /** @type {string} */ color) => ({
      type: 'scatter', mode: 'lines', name, x: t, y: s.col(col), stackgroup: 'loss', line: { color, width: 0.5 }, fillcolor: color + 'aa',
    });
    const loss = [
      stack('high-side device', 'hsLossW', COLORS.lossHs),
      stack('low-side device', 'lsLossW', COLORS.lossLs),
      stack('inductor + capacitors', 'passiveLossW', COLORS.lossPassive),
      stack('gate driver', 'gateDriverW', COLORS.lossGate),
    ];
    this.plot('chart-loss', loss, { xaxis: xTime, yaxis: axis('loss', 'W') });

    const m = s.margin;
    // Margins are sampled less often than records: hold the last value up to the present time.
    const mT = m.tS.slice();
    const mPm = m.pmDeg.slice();
    const mGm = m.gmDb.slice();
    if (mT.length > 0 && tEnd > mT[mT.length - 1]) {
      mT.push(tEnd);
      mPm.push(mPm[mPm.length - 1]);
      mGm.push(mGm[mGm.length - 1]);
    }
    const floor = [{ type: 'line', xref: 'paper', x0: 0, x1: 1, y0: M.pmFloorDeg, y1: M.pmFloorDeg, line: { color: COLORS.floor, width: 1, dash: 'dash' } }];
    const mg = [
      line('phase margin', mT, mPm, COLORS.pm, { line: { shape: 'hv' } }),
      line('gain margin', mT, mGm, COLORS.gm, { yaxis: 'y2', line: { shape: 'hv' } }),
    ];
    this.plot('chart-margin', mg, {
      xaxis: { ...xTime, range: [t.length > 0 ? t[0] : 0, tEnd] }, yaxis: axis('phase margin', '°'),
      yaxis2: { ...axis('gain margin', 'dB'), overlaying: 'y', side: 'right', showgrid: false },
      shapes: floor,
      margin: { ...BASE_LAYOUT.margin, r: 50 },
    });
    setTitle('title-margin', `Inner-loop margins along the run (dashed: ${M.pmFloorDeg}° phase-margin floor)`);
    this.ready = true;
  }

  /** @param {string} id @param {any[]} traces @param {Record<string, any>} layout */
  plot(id, traces, layout) {
    const el = document.getElementById(id);
    if (!el || el.offsetParent === null) return;
    Plotly.react(el, traces, { ...BASE_LAYOUT, ...layout }, CONFIG);
  }

  resize() {
    if (!Plotly) return;
    for (const id of this.ids) {
      const el = document.getElementById(id);
      if (el && el.offsetParent !== null && /** @type {any} */ (el)._fullLayout) Plotly.Plots.resize(el);
    }
  }
}
