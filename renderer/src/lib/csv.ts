/**
 * CSV export that opens safely in a spreadsheet.
 *
 * Layout: RFC 4180 ("Common Format and MIME Type for Comma-Separated Values Files"): fields separated by
 * commas, records by CRLF, a field holding a comma, quote, CR or LF enclosed in double quotes with each
 * quote doubled.
 *
 * Formula injection: a text cell whose first character is `=`, `+`, `-`, `@`, tab or carriage return is
 * read by spreadsheets as a formula. Following the OWASP guidance ("CSV Injection", owasp.org/www-community
 * /attacks/CSV_Injection), such a cell is prefixed with a single quote and the field is enclosed in double
 * quotes. Numbers are written as numbers (shortest round-trip form, so a negative number stays a number
 * and loses no precision); only strings are neutralised.
 */

/** One cell: a number (written as a number), text, or empty (null). */
export type CsvCell = string | number | null;

/** First characters that make a spreadsheet treat a text cell as a formula (OWASP, "CSV Injection"). */
const FORMULA_START = /^[=+\-@\t\r]/;

/**
 * Makes a text cell harmless and CSV-safe.
 *
 * @param text - Untrusted text (a unit name, notes).
 * @returns The field as it goes into the file.
 * @example csvTextField('=HYPERLINK("x")') // `"'=HYPERLINK(""x"")"`
 * @example csvTextField('OL3-0417') // 'OL3-0417'
 */
export function csvTextField(text: string): string {
  const neutral = FORMULA_START.test(text) ? `'${text}` : text;
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
 * Writes rows as CSV text, CRLF between records and at the end (RFC 4180 §2).
 *
 * @example toCsv([['volts', 'hz'], [0, 32.7]]) // 'volts,hz\r\n0,32.7\r\n'
 */
export function toCsv(rows: readonly (readonly CsvCell[])[]): string {
  return rows.map((row) => row.map(csvField).join(',')).join('\r\n') + '\r\n';
}
