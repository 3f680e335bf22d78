/**
 * Dates in the text read from the back of a print. The texts are invented, in the forms labs
 * printed (a month and year, often abbreviated) and families wrote (a year); the EDTF forms expected
 * are those of the Library of Congress's Extended Date/Time Format (ISO 8601-2): "1981-08" a month,
 * "1981" a year.
 */
import { describe, expect, it } from 'vitest';
import { dateOnBack } from '../../../src/lib/backs/back-dates.ts';

describe('a date on the back of a print', () => {
  it('reads a lab imprint as a month and year', () => {
    expect(dateOnBack('HARTIGAN PHOTO LAB\nAUG 1981 No 0714')).toEqual({ edtf: '1981-08', from: 'AUG 1981' });
    expect(dateOnBack('Printed Sept. 79')?.edtf).toBe('1979-09');
    expect(dateOnBack('KODAK PAPER  MAR 84')?.edtf).toBe('1984-03');
    expect(dateOnBack("december '76")?.edtf).toBe('1976-12');
  });

  it('reads a month number and year as a lab printed it', () => {
    expect(dateOnBack('0714 08/81')?.edtf).toBe('1981-08');
    expect(dateOnBack('lot 3 - 11.1983')?.edtf).toBe('1983-11');
  });

  it('reads a handwritten year, or one written short', () => {
    expect(dateOnBack('Granny at the pier 1977')).toEqual({ edtf: '1977', from: '1977' });
    expect(dateOnBack("Summer '81")?.edtf).toBe('1981');
  });

  it('mends digits the reading took for letters only between digits', () => {
    expect(dateOnBack('JUL 198l')).toBeNull();
    expect(dateOnBack('JUL 19O1')?.edtf).toBe('1901-07');
  });

  it('finds no date in a lab name, an order number, or nothing', () => {
    expect(dateOnBack('HARTIGAN PHOTO LAB No 0714')).toBeNull();
    expect(dateOnBack('')).toBeNull();
    expect(dateOnBack('MAY')).toBeNull();
    expect(dateOnBack('order 4411 frame 12')).toBeNull();
  });
});
