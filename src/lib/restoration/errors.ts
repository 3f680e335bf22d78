/** Why a file was refused as a scan. */
export type ScanRejectedCode = 'empty' | 'unsupported_type' | 'too_many_pixels' | 'too_large' | 'unreadable';

const STATUS: Record<ScanRejectedCode, number> = {
  empty: 400,
  unsupported_type: 415,
  too_many_pixels: 413,
  too_large: 413,
  unreadable: 400,
};

/**
 * A file that cannot be taken in as a scan. `message` is plain words, fit to show the archivist;
 * `status` is the HTTP status the web API answers with.
 */
export class ScanRejected extends Error {
  readonly code: ScanRejectedCode;
  readonly status: number;
  constructor(code: ScanRejectedCode, message: string, options?: { cause?: unknown }) {
    super(message, options);
    this.name = 'ScanRejected';
    this.code = code;
    this.status = STATUS[code];
  }
}
