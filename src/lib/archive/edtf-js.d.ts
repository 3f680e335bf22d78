/** The few parts of the `edtf` package (EDTF.js, untyped) that Drawerlight reads. */
declare module 'edtf' {
  export interface Bitmask {
    value: number;
  }
  export interface EdtfValue {
    type: 'Date' | 'Year' | 'Decade' | 'Century' | 'Season' | 'Interval' | 'List' | 'Set';
    edtf: string;
    min: number | null;
    max: number | null;
    values: (number | string | null)[];
    precision?: number;
    approximate?: Bitmask;
    uncertain?: Bitmask;
    unspecified?: Bitmask;
    lower?: EdtfValue | null;
    upper?: EdtfValue | null;
    year?: number;
    season?: number;
    decade?: number;
    century?: number;
  }
  function edtf(input: string, constraints?: Record<string, unknown>): EdtfValue;
  /** Parses without building the date object; throws on text that is not EDTF. */
  export function parse(input: string, constraints?: Record<string, unknown>): { type: string; values: unknown[] };
  export default edtf;
}
