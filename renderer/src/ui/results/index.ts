/** The result views shared by the run, the recording, the unit book and the printed report. */
export { AdviceList } from './AdviceList.tsx';
export { BudgetTable } from './BudgetTable.tsx';
export { ErrorTableHead, COLUMN_HELP } from './ErrorTableHead.tsx';
export { FitSummary } from './FitSummary.tsx';
export {
  resistorLine,
  resultFromAnalysis,
  resultFromStored,
  type ResultModel,
  type ResultRow,
} from './model.ts';
export { ResultTable } from './ResultTable.tsx';
export { STEP_FLAG_TEXT, StepFlags } from './StepFlags.tsx';
export { CompareChart, StepChart } from '../charts.tsx';
export {
  DEFAULT_TOLERANCE_CENTS,
  RUN_REPORT_FORMAT,
  RUN_REPORT_VERSION,
  SOFTWARE_VERSION,
  formatTakenAt,
  reportFileName,
  reportOfStored,
  reportToCsv,
  reportToJson,
  trackingBasis,
  verdictFor,
  VERDICT_LABELS,
  type RunReport,
  type Verdict,
} from './report.ts';
