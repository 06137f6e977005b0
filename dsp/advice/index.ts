/**
 * Trim advice: which trimmer to turn, which way and how far, in words and numbers, the resistor changes
 * that would do it, and the scale pair interval check.
 */
export * from './advice.ts';
