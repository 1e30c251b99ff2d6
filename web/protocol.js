// @ts-check
/**
 * The page's side of the live-session protocol (version 1): a small validator for what the server
 * sends, and builders for the commands. The server validates commands with its own schemas
 * (src/server/protocol.ts); this file keeps the page from acting on a malformed message.
 */

export const PROTOCOL_VERSION = 1;

/** @typedef {'string'|'number'|'boolean'|'object'|'array'|'numOrNull'|'numOrMax'|'any'} Kind */

/** Required fields per message type (optional fields are checked when present). @type {Record<string, Record<string, Kind>>} */
const REQUIRED = {
  hello: { sessionId: 'string', server: 'string', cases: 'array', limits: 'object', hardwareNotice: 'string' },
  scenario: {
    name: 'string', description: 'string', topology: 'string', source: 'string', text: 'string', regulated: 'object', load: 'object',
    supervisorAvailable: 'boolean', supervisorOn: 'boolean', heatDemandW: 'number', inletC: 'number', knobs: 'object', gains: 'object',
    ranges: 'object', recordIntervalS: 'number', tjLimitC: 'number', pmFloorDeg: 'number',
  },
  frame: {
    seq: 'number', tS: 'number', state: 'string', speed: 'numOrMax', achievedSpeed: 'number', records: 'object', merged: 'number',
    droppedRecords: 'number', live: 'object', cautions: 'array', margin: 'any',
  },
  status: { state: 'string', tS: 'number', speed: 'numOrMax', simStatus: 'string', message: 'string', records: 'number' },
  error: { code: 'string', message: 'string' },
  margins: { tS: 'number', result: 'object' },
};

const STATES = new Set(['idle', 'running', 'paused', 'ended', 'failed']);

/** @param {unknown} v @param {Kind} kind */
function is(v, kind) {
  switch (kind) {
    case 'string': return typeof v === 'string';
    case 'number': return typeof v === 'number' && Number.isFinite(v);
    case 'boolean': return typeof v === 'boolean';
    case 'object': return v !== null && typeof v === 'object' && !Array.isArray(v);
    case 'array': return Array.isArray(v);
    case 'numOrNull': return v === null || (typeof v === 'number' && Number.isFinite(v));
    case 'numOrMax': return v === 'max' || (typeof v === 'number' && Number.isFinite(v));
    case 'any': return true;
  }
  return false;
}

/**
 * Check a parsed server message. Returns an error string, or '' when the message is well formed.
 * @param {any} m
 */
export function checkServerMessage(m) {
  if (!is(m, 'object')) return 'message is not an object';
  if (m.v !== PROTOCOL_VERSION) return `protocol version ${JSON.stringify(m.v)} (this page speaks ${PROTOCOL_VERSION})`;
  const req = REQUIRED[m.type];
  if (!req) return `unknown message type ${JSON.stringify(m.type)}`;
  for (const [k, kind] of Object.entries(req)) if (!is(m[k], kind)) return `${m.type}.${k}: expected ${kind}`;
  if ((m.type === 'frame' || m.type === 'status') && !STATES.has(m.state)) return `${m.type}.state: unknown state ${JSON.stringify(m.state)}`;
  if (m.type === 'frame') {
    for (const [k, col] of Object.entries(m.records)) {
      if (!Array.isArray(col)) return `frame.records.${k}: expected an array`;
      for (const x of col) if (!is(x, 'numOrNull')) return `frame.records.${k}: expected numbers`;
    }
    for (const c of m.cautions) if (!is(c, 'object') || !is(c.code, 'string') || !is(c.message, 'string')) return 'frame.cautions: malformed caution';
  }
  if (m.type === 'error' && m.problems !== undefined) {
    if (!Array.isArray(m.problems)) return 'error.problems: expected an array';
    for (const p of m.problems) if (!is(p, 'object') || !is(p.path, 'string') || !is(p.message, 'string')) return 'error.problems: malformed problem';
  }
  return '';
}

let nextId = 1;

/**
 * A command with the protocol version and a correlation id.
 * @param {string} type
 * @param {Record<string, unknown>} [fields]
 */
export function command(type, fields = {}) {
  return { v: PROTOCOL_VERSION, id: nextId++, type, ...fields };
}

/** "Infinity" strings (no crossover) back to numbers. @param {unknown} v */
export function num(v) {
  if (v === 'Infinity') return Infinity;
  if (v === '-Infinity') return -Infinity;
  return typeof v === 'number' ? v : NaN;
}
