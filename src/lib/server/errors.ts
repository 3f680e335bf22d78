/**
 * Typed errors carrying an HTTP status and a stable code. Domain code throws these;
 * `apiRoute` turns them into the one JSON error shape:
 * `{ "error": { "code": "...", "message": "...", "fields": {...} } }`, and pages show their message.
 */
import type { ScanRejected } from '../restoration/errors.ts';

export class AppError extends Error {
  constructor(
    readonly status: number,
    readonly code: string,
    message: string,
    readonly fields?: Record<string, string>,
  ) {
    super(message);
    this.name = new.target.name;
  }
}
export class InvalidInput extends AppError {
  constructor(message: string, fields?: Record<string, string>) {
    super(400, 'invalid_input', message, fields);
  }
}
export class NotSignedIn extends AppError {
  constructor(message = 'Sign in first.') {
    super(401, 'not_signed_in', message);
  }
}
export class Forbidden extends AppError {
  constructor(message = 'Your role in this archive does not allow that.') {
    super(403, 'forbidden', message);
  }
}
export class NotFound extends AppError {
  constructor(what = 'That') {
    super(404, 'not_found', `${what} was not found.`);
  }
}
export class Conflict extends AppError {
  constructor(message: string, code = 'conflict') {
    super(409, code, message);
  }
}
export class TooLarge extends AppError {
  constructor(message: string) {
    super(413, 'too_large', message);
  }
}
export class UnsupportedType extends AppError {
  constructor(message: string) {
    super(415, 'unsupported_type', message);
  }
}
export class TooManyRequests extends AppError {
  constructor(message = 'Too many attempts. Wait a few minutes and try again.', readonly retryAfterSeconds = 60) {
    super(429, 'too_many_requests', message);
  }
}
/** A file refused as a scan by the engine (empty, not an image we read, too many pixels, damaged), named in `fields.file`. */
export class RefusedScan extends AppError {
  constructor(rejected: ScanRejected, fileName: string) {
    super(rejected.status, rejected.code, rejected.message, { file: fileName });
  }
}
export class StorageFull extends AppError {
  constructor() {
    super(507, 'storage_full', 'The storage disk is full: nothing was stored. Free some space and try again.');
  }
}
