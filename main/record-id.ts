/**
 * Record ids double as file names (`<id>.json` in the records folder), so they are checked as
 * strictly as a file name taken from an untrusted page must be.
 *
 * Allowed: 1 to 64 characters of lowercase ASCII letters, digits and `-`, starting with a letter or
 * a digit, and not a reserved Windows device name. Lowercase only, because macOS and Windows
 * file systems are case-insensitive by default and `Unit-A` and `unit-a` would be the same file.
 */

/** Longest accepted record id, in characters. */
export const MAX_RECORD_ID_LENGTH = 64;

const ID_PATTERN = /^[a-z0-9][a-z0-9-]*$/;

/**
 * Device names Windows reserves in every folder, with or without an extension.
 * Source: Microsoft Learn, "Naming Files, Paths, and Namespaces" (CON, PRN, AUX, NUL, COM0–COM9,
 * LPT0–LPT9; the superscript-digit variants cannot occur because ids are ASCII only).
 */
export const WINDOWS_RESERVED_NAMES: readonly string[] = [
  'con',
  'prn',
  'aux',
  'nul',
  ...Array.from({ length: 10 }, (_, i) => `com${i}`),
  ...Array.from({ length: 10 }, (_, i) => `lpt${i}`),
];

/**
 * Checks a record id and says what is wrong with it.
 *
 * @param id - the candidate id, untrusted (may come from the renderer or a file).
 * @returns `null` when the id is acceptable, otherwise a one-line message naming the problem.
 * @example recordIdProblem('vco-a-7k2m9q4x') // → null
 * @example recordIdProblem('../etc/passwd') // → 'record id "../etc/passwd" contains ".." (path traversal)'
 */
export function recordIdProblem(id: unknown): string | null {
  if (typeof id !== 'string') return `record id must be a string, got ${typeof id}`;
  const shown = JSON.stringify(id.length > 80 ? `${id.slice(0, 80)}…` : id);
  if (id.length === 0) return 'record id is empty';
  if (id.length > MAX_RECORD_ID_LENGTH) {
    return `record id ${shown} is ${id.length} characters long; the limit is ${MAX_RECORD_ID_LENGTH}`;
  }
  if (id.includes('..')) return `record id ${shown} contains ".." (path traversal)`;
  if (id.startsWith('/') || /^[A-Za-z]:/.test(id) || id.startsWith('\\')) {
    return `record id ${shown} is an absolute path`;
  }
  if (id.includes('/') || id.includes('\\')) return `record id ${shown} contains a path separator`;
  if (id.includes('\0')) return `record id ${shown} contains a NUL character`;
  if (!ID_PATTERN.test(id)) {
    return `record id ${shown} may only contain a-z, 0-9 and "-", and must start with a letter or digit`;
  }
  if (WINDOWS_RESERVED_NAMES.includes(id)) return `record id ${shown} is a reserved Windows device name`;
  return null;
}

/** True when {@link recordIdProblem} finds nothing wrong. @example isValidRecordId('nul') // → false */
export function isValidRecordId(id: unknown): id is string {
  return recordIdProblem(id) === null;
}

/**
 * Turns a unit name into the readable part of a record id: ASCII lowercase, runs of anything else
 * turned into one `-`, at most 40 characters, `unit` when nothing is left.
 *
 * @example slugify('VCO #2 (bench, rev B)') // → 'vco-2-bench-rev-b'
 */
export function slugify(name: string): string {
  const slug = name
    .normalize('NFKD')
    .replace(/[\u0300-\u036f]/g, '')
    .toLowerCase()
    .replace(/[^a-z0-9]+/g, '-')
    .replace(/^-+|-+$/g, '')
    .slice(0, 40)
    .replace(/-+$/g, '');
  return slug.length > 0 ? slug : 'unit';
}

const SUFFIX_ALPHABET = 'abcdefghijkmnpqrstuvwxyz23456789';

/**
 * A new record id: the slug of the unit name, `-`, and 8 random characters from a 32-letter
 * alphabet (40 bits), e.g. `vco-2-bench-k3m9x2qa`. Never a reserved name, because of the suffix.
 *
 * @param unitName - the unit's display name, any text.
 * @param randomBytes - source of randomness (`crypto.randomBytes` in production), returns `n` bytes.
 * @example newRecordId('VCO 2', () => new Uint8Array(8)) // → 'vco-2-aaaaaaaa'
 */
export function newRecordId(unitName: string, randomBytes: (n: number) => Uint8Array): string {
  const bytes = randomBytes(8);
  let suffix = '';
  for (let i = 0; i < 8; i++) suffix += SUFFIX_ALPHABET[bytes[i] % SUFFIX_ALPHABET.length];
  return `${slugify(unitName)}-${suffix}`;
}
