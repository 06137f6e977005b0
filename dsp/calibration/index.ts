/**
 * A calibration pass from plan to result: plans and their grammar (`plan`), plateau detection (`plateau`),
 * the run state machine and its schema (`run`), the error table (`table`), the scale-pair pairing (`scale-pair`),
 * drift and its one-second bins (`drift`, `drift-bins`), thermal tails (`tail`), and the one path from captured steps to a result
 * (`pipeline`, `assessment`) with the one versioned result shape every path saves and prints (`result`).
 */
export * from './assessment.ts';
export * from './drift.ts';
export * from './drift-bins.ts';
export * from './pipeline.ts';
export * from './plan.ts';
export * from './plateau.ts';
export * from './result.ts';
export * from './run.ts';
export * from './table.ts';
export * from './tail.ts';
export * from './scale-pair.ts';
