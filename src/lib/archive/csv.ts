/**
 * CSV files the archivist opens in a spreadsheet program (photos.csv of an export, the rescan
 * list). A cell that starts with `=`, `+`, `-`, `@`, a tab or a carriage return is read by those
 * programs as a formula, so text typed by any member (a caption, a place, a file name) could run
 * one on the archivist's computer. Following the OWASP guidance on CSV injection, such a cell gets
 * a leading single quote, which spreadsheets take as "this is text" and do not show.
 */
import { stringify } from 'csv-stringify/sync';

const FORMULA_START = /^[=+\-@\t\r]/;

/** One cell made safe to open in a spreadsheet (see the module comment). */
export function spreadsheetSafeCell(value: string): string {
  return FORMULA_START.test(value) ? `'${value}` : value;
}

/**
 * Records as CSV text (RFC 4180 quoting by csv-stringify), every cell made spreadsheet-safe,
 * preceded by a UTF-8 byte-order mark so spreadsheet programs read accents right.
 */
export function spreadsheetCsv(records: string[][]): string {
  return '\ufeff' + stringify(records.map((r) => r.map(spreadsheetSafeCell)));
}
