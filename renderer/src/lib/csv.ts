/**
 * CSV export that opens safely and correctly in a spreadsheet.
 *
 * Layout: RFC 4180 ("Common Format and MIME Type for Comma-Separated Values Files"): fields separated by
 * commas, records by CRLF, a field holding a comma, quote, CR or LF enclosed in double quotes with each
 * quote doubled. The text starts with a UTF-8 byte-order mark (U+FEFF), by which spreadsheets recognise
 * UTF-8 (the Unicode Standard §23.8 names it as the UTF-8 signature); without it µ, Ω and é come out
 * garbled in common spreadsheets.
 *
 * Formula injection: a text cell whose first character, after any leading white space, is `=`, `+`, `-`,
 * `@` or their full-width forms `＝＋－＠` (U+FF1D, U+FF0B, U+FF0D, U+FF20), or that starts with tab or
 * carriage return, can be read by a spreadsheet as a formula. Following the OWASP guidance ("CSV
 * Injection", owasp.org/www-community/attacks/CSV_Injection), such a cell is prefixed with a single quote
 * and the field is enclosed in double quotes.
 *
 * Text that a spreadsheet would turn into a number, a date, a percentage or a truth value (`0042`, `1e5`,
 * `3/4`, `2026-12-02`, `12%`, `TRUE`) gets the same single-quote prefix, so it stays the text it was (a
 * serial "0042" must not become 42). Numbers are written as numbers (shortest round-trip form, so a
 * negative number stays a number and loses no precision); only strings are guarded.
 */

/** One cell: a number (written as a number), text, or empty (null). */
export type CsvCell = string | number | null;

/** The UTF-8 byte-order mark that starts every file (as a character; UTF-8 encodes it as EF BB BF). */
export const CSV_BOM = '\uFEFF';

/**
 * Starts that make a spreadsheet treat a text cell as a formula (OWASP, "CSV Injection"): = + - @ after
 * any white space (full-width space U+3000 included), their full-width forms, or a leading tab or CR.
 */
const FORMULA_START = /^(?:[\t\r]|[\s\u3000]*[=+\-@\uFF1D\uFF0B\uFF0D\uFF20])/;

/**
 * Text a spreadsheet would convert on import (common practice of LibreOffice Calc and Excel, from memory):
 * numbers in any common notation (leading zeros, exponents, thousands separators, a percent sign, currency
 * signs, parentheses for negatives), dates and times with - / . or :, and TRUE/FALSE.
 */
const COERCED = [
  /^[\s\u3000]*[(]?[$€£¥]?[-+]?(?:\d[\d,. \u00a0']*|[.,]\d+)(?:[eE][-+]?\d+)?[%)]?[\s\u3000]*$/,
  /^[\s\u3000]*\d{1,4}[-/.]\d{1,2}(?:[-/.]\d{1,4})?(?:[ T]\d{1,2}:\d{2}(?::\d{2}(?:\.\d+)?)?(?:Z|[-+]\d{2}:?\d{2})?)?[\s\u3000]*$/,
  /^[\s\u3000]*\d{1,2}:\d{2}(?::\d{2}(?:\.\d+)?)?(?:\s*[AaPp][Mm])?[\s\u3000]*$/,
  /^[\s\u3000]*(?:true|false)[\s\u3000]*$/i,
];

/**
 * True when a spreadsheet would read this text as something other than text: a formula, a number, a
 * date, a time, a percentage or a truth value.
 *
 * @example needsGuard('0042') // true
 * @example needsGuard('OL3-0417') // false
 */
export function needsGuard(text: string): boolean {
  return FORMULA_START.test(text) || COERCED.some((re) => re.test(text));
}

/**
 * Makes a text cell harmless, CSV-safe and text in a spreadsheet.
 *
 * @param text - Untrusted text (a unit name, notes).
 * @returns The field as it goes into the file.
 * @example csvTextField('=HYPERLINK("x")') // `"'=HYPERLINK(""x"")"`
 * @example csvTextField(' ＝1+1') // `"' ＝1+1"`
 * @example csvTextField('0042') // `"'0042"`
 * @example csvTextField('OL3-0417') // 'OL3-0417'
 */
export function csvTextField(text: string): string {
  const neutral = needsGuard(text) ? `'${text}` : text;
  const mustQuote = neutral !== text || /[",\r\n]/.test(neutral);
  return mustQuote ? `"${neutral.replace(/"/g, '""')}"` : neutral;
}

/**
 * One cell as a CSV field. Finite numbers are written with JavaScript's shortest round-trip form
 * (`String(x)`: `-1.5`, `1e-7`); non-finite numbers and null become an empty field.
 *
 * @example csvField(-0.25) // '-0.25'
 * @example csvField(null) // ''
 */
export function csvField(cell: CsvCell): string {
  if (cell === null) return '';
  if (typeof cell === 'number') return Number.isFinite(cell) ? String(cell) : '';
  return csvTextField(cell);
}

/**
 * Writes rows as CSV text: the UTF-8 byte-order mark, then the records with CRLF between them and at the
 * end (RFC 4180 §2).
 *
 * @example toCsv([['volts', 'hz'], [0, 32.7]]) // '\uFEFFvolts,hz\r\n0,32.7\r\n'
 */
export function toCsv(rows: readonly (readonly CsvCell[])[]): string {
  return CSV_BOM + rows.map((row) => row.map(csvField).join(',')).join('\r\n') + '\r\n';
}
