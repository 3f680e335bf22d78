/**
 * Text people type (batch names, captions, places, people): stored in Unicode NFC, so "Zoë" typed
 * with a precomposed ë or with e + combining diaeresis is one name, and free of control characters,
 * which no keyboard types and which break CSV files, e-mails and terminals. Pure: shared with islands.
 */
import { z } from 'zod';

/** C0 and C1 controls and DEL: nothing a one-line field may hold. */
const LINE_CONTROLS = /[\u0000-\u001f\u007f-\u009f]/;
/** The same, less tab and line breaks, which a caption or a note written over lines keeps. */
const TEXT_CONTROLS = /[\u0000-\u0008\u000b\u000c\u000e-\u001f\u007f-\u009f]/;

/** True when `s` holds a control character a field of that kind refuses. */
export function hasControlCharacters(s: string, multiline = false): boolean {
  return (multiline ? TEXT_CONTROLS : LINE_CONTROLS).test(s);
}

/** A string refused when it holds control characters, then normalised to NFC (not trimmed). */
export function plainText(what: string, multiline = false) {
  return z
    .string()
    .refine((s) => !hasControlCharacters(s, multiline), `${what} cannot contain control characters${multiline ? '' : ' or line breaks'}.`)
    .transform((s) => s.normalize('NFC'));
}
