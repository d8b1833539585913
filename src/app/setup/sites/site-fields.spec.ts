import { describe, expect, it } from '@jest/globals';

import { countryNameOf, matchingTimeZones } from './site-fields';

// Region names and zone ids from the ICU data (CLDR / IANA tz database) the runtime ships.
describe('countryNameOf', () => {
  it.each([
    ['NO', 'Norway'],
    ['es', 'Spain'],
    [' ca ', 'Canada'],
    ['XQ', ''],
    ['ZZ', ''],
    ['NOR', ''],
    ['', ''],
  ])('%j is "%s"', (code, name) => {
    expect(countryNameOf(code)).toBe(name);
  });
});

describe('matchingTimeZones', () => {
  const zones = ['Africa/Johannesburg', 'America/Toronto', 'Europe/Madrid', 'Europe/Oslo', 'Europe/Oslo_Fictional'];

  it.each<[string, string[]]>([
    ['oslo', ['Europe/Oslo', 'Europe/Oslo_Fictional']],
    ['europe osl', ['Europe/Oslo', 'Europe/Oslo_Fictional']],
    ['Europe/Madrid', ['Europe/Madrid']],
    ['toronto america', ['America/Toronto']],
    ['atlantis', []],
  ])('%j finds %j', (typed, expected) => {
    expect(matchingTimeZones(typed, zones)).toEqual(expected);
  });

  it('offers at most twelve zones, the first ones, while nothing is typed', () => {
    const many = Array.from({ length: 20 }, (_, i) => `Zone/Z${i}`);
    expect(matchingTimeZones('', many)).toEqual(many.slice(0, 12));
  });

  it('knows the real zones of the runtime', () => {
    expect(matchingTimeZones('Europe/Oslo')).toContain('Europe/Oslo');
  });
});
