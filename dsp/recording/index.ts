/**
 * Analysis of recordings: a recording read block by block as a sample source (`recording-input`), the
 * stepped pass found in it and sent through the one pipeline (`recording`), and a single held tone reported as a
 * pitch that may move (`steady-tone`).
 */
export * from './recording.ts';
export * from './recording-input.ts';
export * from './decimate.ts';
export * from './steady-tone.ts';
