/**
 * Types for the renderer: `import type { SpanmeterApi, UnitRecord } from './api-types.ts'`.
 * Everything here derives from the preload (`preload-api.ts`) and the IPC contract, so the two
 * sides cannot drift apart. Type-only: importing this file adds nothing to a bundle.
 */
import type { SpanmeterApi } from './preload-api.ts';

export type { SpanmeterApi };
export type { Channel } from './channels.ts';
export type {
  AutosaveResult,
  DriftLog,
  DriftLogSummary,
  RestoreConflict,
  RestoreCounts,
  RestoreOutcome,
  RestorePolicy,
  TrashedRun,
  ExportRequest,
  IpcErrorCode,
  IpcFailure,
  IpcResult,
  JsonValue,
  RecordList,
  RecordProblem,
  RecordSummary,
  RequestOf,
  ResponseOf,
  Run,
  UnitRecord,
  UnitRecordDraft,
} from './ipc-contract.ts';

declare global {
  interface Window {
    /**
     * The desktop API, present only inside the Electron app; `undefined` in a plain browser
     * (`npm run web`), so the renderer must check for it.
     */
    readonly spanmeter?: SpanmeterApi;
  }
}
