/**
 * The run as a report (the live run, or the opened recording, with the unit form's details), its exports
 * through the store, and printing: the report to print is rendered first, then the browser's print runs.
 */
import { useCallback, useMemo, useState } from 'react';
import type { RecordStore } from '../storage/store.ts';
import type { RunAnalysis } from '../lib/analysis.ts';
import { numberOrNull } from '../lib/fields.ts';
import { UNIT_RULES, type UnitInfo } from '../ui/RecordsPanel.tsx';
import {
  DEFAULT_TOLERANCE_CENTS,
  SOFTWARE_VERSION,
  reportFileName,
  reportToCsv,
  reportToJson,
  resultFromAnalysis,
  type RunReport,
} from '../ui/results/index.ts';

/**
 * @param store - Where exports go.
 * @param analysis - What is shown (the run, or the recording), or null.
 * @param info - The unit form.
 * @param label - The label of what is shown ("not saved", or the recording's file name).
 * @param takenAt - When it was measured, ISO 8601, or null.
 * @param planVolts - Its plan.
 */
export function useRunReports(
  store: RecordStore,
  analysis: RunAnalysis | null,
  info: UnitInfo,
  label: string,
  takenAt: string | null,
  planVolts: readonly number[],
) {
  const [exportMsg, setExportMsg] = useState<string | null>(null);
  const [printReport, setPrintReport] = useState<RunReport | null>(null);

  const liveReport = useMemo((): RunReport | null => {
    if (!analysis || (analysis.table?.rows.length ?? 0) === 0) return null;
    return {
      result: resultFromAnalysis(analysis),
      unitName: info.unitName.trim() || info.serial.trim(),
      serial: info.serial.trim() || null,
      label,
      takenAt,
      roomTempC: numberOrNull(info.roomTempC, UNIT_RULES.roomTempC),
      meterUsed: info.meterUsed.trim() || null,
      warmUpMinutes: numberOrNull(info.warmUpMinutes, UNIT_RULES.warmUpMinutes),
      notes: info.notes.trim() || null,
      planVolts,
      toleranceCents: numberOrNull(info.toleranceCents, UNIT_RULES.toleranceCents) ?? DEFAULT_TOLERANCE_CENTS,
      saved: false,
      softwareVersion: SOFTWARE_VERSION,
    };
  }, [analysis, info, label, takenAt, planVolts]);

  const doExport = useCallback(
    async (report: RunReport, format: 'csv' | 'json') => {
      const content = format === 'csv' ? reportToCsv(report) : reportToJson(report);
      const r = await store.exportFile({ format, suggestedName: reportFileName(report), content });
      setExportMsg(
        r.ok
          ? r.value.kind === 'saved'
            ? `Exported ${r.value.fileName}.`
            : 'Export cancelled.'
          : r.error.message,
      );
    },
    [store],
  );

  const doPrint = useCallback((report: RunReport) => {
    setPrintReport(report);
    // Print once the report has rendered.
    window.setTimeout(() => window.print(), 50);
  }, []);

  return { liveReport, printReport: printReport ?? liveReport, doExport, doPrint, exportMsg };
}
