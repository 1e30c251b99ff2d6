// @ts-check
/**
 * Scenario editor helpers: find the line of a field path (`thermal.coolant.flowKgPerS`,
 * `profiles.heatDemandW.step[2]`) in YAML text by indentation, so a validation problem can take
 * the cursor to its field. Flow mappings (`{ a: 1 }`) resolve to the line that holds them.
 */

/**
 * @param {string} text
 * @param {string} path
 * @returns {number} zero-based line index, or -1
 */
export function lineOfPath(text, path) {
  const lines = text.split('\n');
  const keys = path.split(/\.|\[\d+\]/).filter((k) => k && k !== '(root)');
  if (keys.length === 0) return -1;
  /** @type {Array<{indent:number, key:string}>} */
  const stack = [];
  let best = -1;
  let bestDepth = 0;
  for (let i = 0; i < lines.length; i++) {
    const m = /^(\s*)(?:-\s+)?["']?([A-Za-z0-9_$]+)["']?\s*:/.exec(lines[i]);
    if (!m || /^\s*#/.test(lines[i])) continue;
    const indent = m[1].length + (lines[i].slice(m[1].length).startsWith('-') ? 2 : 0);
    while (stack.length > 0 && stack[stack.length - 1].indent >= indent) stack.pop();
    stack.push({ indent, key: m[2] });
    let depth = 0;
    while (depth < stack.length && depth < keys.length && stack[depth].key === keys[depth]) depth++;
    if (depth === stack.length && depth > bestDepth) {
      best = i;
      bestDepth = depth;
      if (depth === keys.length) break;
    }
  }
  return best;
}

/** Line of a syntax problem ("line 12, column 3: ..."), zero-based, or -1. @param {string} message */
export function lineOfSyntax(message) {
  const m = /line (\d+)/.exec(message);
  return m ? Number(m[1]) - 1 : -1;
}

/**
 * Select a line in a textarea and scroll it into view.
 * @param {HTMLTextAreaElement} ta
 * @param {number} line
 */
export function selectLine(ta, line) {
  if (line < 0) return;
  const lines = ta.value.split('\n');
  let start = 0;
  for (let i = 0; i < line && i < lines.length; i++) start += lines[i].length + 1;
  const end = start + (lines[line]?.length ?? 0);
  ta.focus();
  ta.setSelectionRange(start, end);
  const lh = parseFloat(getComputedStyle(ta).lineHeight) || 16;
  ta.scrollTop = Math.max(0, line * lh - ta.clientHeight / 3);
}
