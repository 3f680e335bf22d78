/** The few parts of the `edtf` package (EDTF.js, untyped) that Drawerlight reads. */
declare module 'edtf' {
  interface Bitmask {
    value: number;
  }
  interface EdtfValue {
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
  export default edtf;
}
