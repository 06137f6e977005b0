import { modelBenchCases } from './cli/bench-model.ts';
const only = new Set(process.env.ONLY!.split(','));
const t0 = performance.now();
console.log(modelBenchCases((n) => only.has(n), process.env.QUICK === '1'));
console.log(((performance.now()-t0)/1000).toFixed(1), 's');
