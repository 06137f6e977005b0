/**
 * The calibration model and its uncertainty: the weighted tracking fit and bend analysis (`fit`), the one
 * model (line plus HF term, plus a low-end term where the data support it) behind every figure (`model`), the GUM
 * uncertainty budget (`budget`) and tolerance judged with the expanded uncertainty (`tolerance`).
 */
export * from './budget.ts';
export * from './fit.ts';
export * from './model.ts';
export * from './tolerance.ts';
