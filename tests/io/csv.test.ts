import { describe, expect, it } from 'vitest';
import { columnsOf, csvField, flatten, toCsv } from '../../src/io/csv.ts';

describe('flatten', () => {
  it('flatten(nested) joins keys with dots in insertion order', () => {
    expect(flatten({ a: 1, tjC: { highSide: 40, lowSide: 35 }, deep: { x: { y: true } } })).toEqual({
      a: 1,
      'tjC.highSide': 40,
      'tjC.lowSide': 35,
      'deep.x.y': true,
    });
  });

  it('joins arrays of scalars with ";", keeps arrays of objects as JSON, and empties null', () => {
    expect(flatten({ codes: ['capRipple', 'shootThrough'], list: [{ a: 1 }], none: null, gone: undefined })).toEqual({
      codes: 'capRipple;shootThrough',
      list: '[{"a":1}]',
      none: null,
      gone: null,
    });
  });
});

describe('CSV', () => {
  it('csvField quotes commas, quotes, line breaks and edge spaces (RFC 4180)', () => {
    expect(csvField('plain')).toBe('plain');
    expect(csvField('a,b')).toBe('"a,b"');
    expect(csvField('say "hi"')).toBe('"say ""hi"""');
    expect(csvField('two\nlines')).toBe('"two\nlines"');
    expect(csvField(' padded')).toBe('" padded"');
    expect(csvField(null)).toBe('');
    expect(csvField(-1.5e-9)).toBe('-1.5e-9');
  });

  it('columnsOf keeps first-seen order across rows, so a key missing from the first row still gets a column', () => {
    expect(columnsOf([{ a: 1, b: 2 }, { a: 1, c: 3, b: 2 }])).toEqual(['a', 'b', 'c']);
  });

  it('toCsv writes a header and one line per row, with empty fields for missing keys', () => {
    expect(toCsv([{ v: 1, o: { x: 2 } }, { v: 3, o: null }])).toBe('v,o.x,o\n1,2,\n3,,\n');
  });
});
