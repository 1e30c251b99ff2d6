/** Unit hint for a field, read off the SI suffix in its name (`fswHz` → "Hz"). */
const SUFFIX_UNITS: ReadonlyArray<readonly [RegExp, string]> = [
  [/KPerW$/, 'K/W'],
  [/JPerK$/, 'J/K'],
  [/JPerKgK$/, 'J/(kg·K)'],
  [/KgPerS$/, 'kg/s'],
  [/VPerK$/, 'V/K'],
  [/PerK$/, '1/K'],
  [/PerV$/, '1/V'],
  [/APerV2$/, 'A/V²'],
  [/HzPerS$/, 'Hz/s'],
  [/VPerS$/, 'V/s'],
  [/SPerS$/, 's/s'],
  [/WPerS$/, 'W/s'],
  [/PerS$/, '1/s'],
  [/Coulomb$/, 'C (coulomb)'],
  [/Ohm$/, 'Ω'],
  [/Hz$/, 'Hz'],
  [/Kg$/, 'kg'],
  [/M2$/, 'm²'],
  [/M3$/, 'm³'],
  [/Deg$/, 'degrees'],
  [/[a-z0-9]S$/, 's'],
  [/[a-z0-9]V$/, 'V'],
  [/[a-z0-9]A$/, 'A'],
  [/[a-z0-9]W$/, 'W'],
  [/[a-z0-9]H$/, 'H'],
  [/[a-z0-9]F$/, 'F'],
  [/[a-z0-9]C$/, '°C'],
  [/[a-z0-9]K$/, 'K'],
  [/Fraction$/, 'fraction 0..1'],
];

export function unitOf(fieldName: string): string | undefined {
  for (const [re, unit] of SUFFIX_UNITS) if (re.test(fieldName)) return unit;
  return undefined;
}
