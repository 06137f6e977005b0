/**
 * The unit book: who the unit is (name or serial, notes, room temperature, meter, tolerance), saving the
 * run to its record, an overview of every unit (searchable, with the last verdict), a unit's runs, any
 * saved run in full (table, fit, advice, chart) with its own exports and printed report, and two runs of
 * a unit compared.
 */
import { useCallback, useEffect, useMemo, useState, type ReactNode } from 'react';
import type { CalibrationResult } from '../../../dsp/calibration/index.ts';
import type { RecordSummary, Run, UnitRecord, UnitRecordDraft } from '../../../main/api-types.ts';
import { RECORD_SCHEMA_VERSION } from '../../../main/ipc-contract.ts';
import { numberOrNull } from '../lib/fields.ts';
import { formatCents } from '../../../dsp/format/index.ts';
import type { RecordStore } from '../storage/store.ts';
import { CompareChart, StepChart } from './charts.tsx';
import { NumberField } from './NumberField.tsx';
import { BudgetTable } from './results/BudgetTable.tsx';
import {
  AdviceList,
  DEFAULT_TOLERANCE_CENTS,
  FitSummary,
  ResultTable,
  formatTakenAt,
  reportOfStored,
  trackingBasis,
  verdictFor,
  VERDICT_LABELS,
  type RunReport,
} from './results/index.ts';

/** What the user types about the unit. */
export interface UnitInfo {
  unitName: string;
  serial: string;
  notes: string;
  roomTempC: string;
  meterUsed: string;
  warmUpMinutes: string;
  /** Tracking tolerance, ± cents; '' for the default. */
  toleranceCents: string;
}

export const EMPTY_UNIT_INFO: UnitInfo = {
  unitName: '',
  serial: '',
  notes: '',
  roomTempC: '',
  meterUsed: '',
  warmUpMinutes: '',
  toleranceCents: '',
};

/** Rules of the unit form's number fields (the IPC contract's ranges). */
export const UNIT_RULES = {
  roomTempC: { min: -40, max: 80, unit: '°C' },
  warmUpMinutes: { min: 0, max: 1440, unit: 'min' },
  toleranceCents: { min: 0.01, max: 100, unit: '¢' },
} as const;

/** One line per unit-form field that cannot be saved as typed. */
export function unitInfoProblems(info: UnitInfo): string[] {
  const out: string[] = [];
  (Object.keys(UNIT_RULES) as (keyof typeof UNIT_RULES)[]).forEach((k) => {
    if (info[k].trim() !== '' && numberOrNull(info[k], UNIT_RULES[k]) === null) out.push(k);
  });
  return out;
}

/**
 * A record draft from the form, with the runs to store. Empty optional fields are left out (the IPC
 * contract carries plain JSON without undefined values). Fields that do not parse are not saved (the
 * form shows them as invalid and the save button says so).
 */
export function draftFromInfo(info: UnitInfo, runs: Run[], base?: UnitRecord): UnitRecordDraft {
  const d: UnitRecordDraft = {
    schemaVersion: RECORD_SCHEMA_VERSION,
    unitName: info.unitName.trim() || info.serial.trim() || 'Unnamed unit',
    runs,
  };
  if (base) {
    d.id = base.id;
    d.createdAt = base.createdAt;
    if (base.revision !== undefined) d.revision = base.revision; // the revision this save is based on
  }
  if (info.serial.trim()) d.serial = info.serial.trim();
  if (info.notes.trim()) d.notes = info.notes;
  const t = numberOrNull(info.roomTempC, UNIT_RULES.roomTempC);
  if (t !== null) d.roomTempC = t;
  if (info.meterUsed.trim()) d.meterUsed = info.meterUsed.trim();
  const w = numberOrNull(info.warmUpMinutes, UNIT_RULES.warmUpMinutes);
  if (w !== null) d.warmUpMinutes = w;
  const tol = numberOrNull(info.toleranceCents, UNIT_RULES.toleranceCents);
  if (tol !== null) d.toleranceCents = tol;
  return d;
}

export function infoFromRecord(r: UnitRecord): UnitInfo {
  return {
    unitName: r.unitName,
    serial: r.serial ?? '',
    notes: r.notes ?? '',
    roomTempC: r.roomTempC === undefined ? '' : String(r.roomTempC),
    meterUsed: r.meterUsed ?? '',
    warmUpMinutes: r.warmUpMinutes === undefined ? '' : String(r.warmUpMinutes),
    toleranceCents: r.toleranceCents === undefined ? '' : String(r.toleranceCents),
  };
}

function newRunId(): string {
  return typeof crypto !== 'undefined' && 'randomUUID' in crypto
    ? crypto.randomUUID()
    : `run-${Date.now().toString(36)}-${Math.floor(Math.random() * 1e9).toString(36)}`;
}

/** One line of the overview of all units. */
interface OverviewRow {
  summary: RecordSummary;
  record: UnitRecord | null;
}

export interface RecordsPanelProps {
  store: RecordStore;
  info: UnitInfo;
  onInfo(i: UnitInfo): void;
  /**
   * What a save stores: the one result (`dsp/calibration/result.ts`) of the live run or of an opened recording, or
   * null when there is nothing to save.
   */
  result: CalibrationResult | null;
  planVolts: readonly number[];
  /** The live run (not saved yet) as a report, or null. */
  liveReport: RunReport | null;
  onExport(report: RunReport, format: 'csv' | 'json'): void;
  onPrint(report: RunReport): void;
  onSaved(): void;
  /** The record the next save adds to (kept by the app, so it survives switching tabs), or null. */
  openRecord: UnitRecord | null;
  onOpenRecord(r: UnitRecord | null): void;
  /**
   * Extra tools shown under the records (backup, restore, trash): a node, or a function given a callback
   * that reloads the list after the tools changed the store and a key that changes with the list.
   */
  tools?: ReactNode | ((ctx: { onChanged(): void; refreshKey: unknown }) => ReactNode);
}

export function RecordsPanel(p: RecordsPanelProps) {
  const [list, setList] = useState<OverviewRow[]>([]);
  const [query, setQuery] = useState('');
  const open = p.openRecord;
  const setOpen = p.onOpenRecord;
  const [label, setLabel] = useState(open && open.runs.length > 0 ? 'after' : 'before');
  const [compare, setCompare] = useState<string[]>(() => (open ? open.runs.slice(-2).map((x) => x.id) : []));
  const [viewRunId, setViewRunId] = useState<string | null>(() => open?.runs.at(-1)?.id ?? null);
  const [message, setMessage] = useState<{ kind: 'info' | 'error'; text: string } | null>(null);
  const [confirmDelete, setConfirmDelete] = useState<string | null>(null);

  const refresh = useCallback(async () => {
    const r = await p.store.listRecords();
    if (!r.ok) {
      setMessage({ kind: 'error', text: r.error.message });
      return;
    }
    const rows = await Promise.all(
      r.value.map(async (summary) => {
        const full = await p.store.loadRecord(summary.id);
        return { summary, record: full.ok ? full.value : null };
      }),
    );
    setList(rows);
  }, [p.store]);

  useEffect(() => {
    void refresh();
  }, [refresh]);

  const problems = unitInfoProblems(p.info);
  const canSave = p.result !== null && p.result.steps.length > 0 && problems.length === 0;

  const save = async () => {
    if (!p.result) return;
    const run: Run = {
      id: newRunId(),
      takenAt: p.liveReport?.takenAt ?? new Date().toISOString(),
      label: label.trim() || 'run',
      plan: { volts: [...p.planVolts] },
      result: p.result,
    };
    const draft = draftFromInfo(p.info, [...(open?.runs ?? []), run], open ?? undefined);
    const r = await p.store.saveRecord(draft);
    if (r.ok) {
      setOpen(r.value);
      setCompare(r.value.runs.slice(-2).map((x) => x.id));
      setViewRunId(run.id);
      const n = r.value.runs.length;
      setMessage({
        kind: 'info',
        text: `Saved as run “${run.label}” of ${r.value.unitName} (${n} run${n === 1 ? '' : 's'}).`,
      });
      if (label === 'before') setLabel('after');
      p.onSaved();
      void refresh();
    } else setMessage({ kind: 'error', text: r.error.message });
  };

  const show = (rec: UnitRecord) => {
    setOpen(rec);
    p.onInfo(infoFromRecord(rec));
    setCompare(rec.runs.slice(-2).map((x) => x.id));
    setViewRunId(rec.runs.at(-1)?.id ?? null);
    setMessage(null);
  };

  const load = async (id: string) => {
    const r = await p.store.loadRecord(id);
    if (r.ok) show(r.value);
    else setMessage({ kind: 'error', text: r.error.message });
  };

  const remove = async (id: string, name: string) => {
    setConfirmDelete(null);
    const r = await p.store.deleteRecord(id);
    if (r.ok) {
      if (open?.id === id) setOpen(null);
      setMessage({ kind: 'info', text: `Deleted the record of ${name}.` });
      void refresh();
    } else setMessage({ kind: 'error', text: r.error.message });
  };

  const set = (k: keyof UnitInfo) => (v: string) => p.onInfo({ ...p.info, [k]: v });

  const q = query.trim().toLowerCase();
  const shown = useMemo(
    () =>
      list.filter(
        (r) =>
          q === '' ||
          r.summary.unitName.toLowerCase().includes(q) ||
          (r.summary.serial ?? '').toLowerCase().includes(q) ||
          (r.record?.notes ?? '').toLowerCase().includes(q),
      ),
    [list, q],
  );

  const viewRun = open?.runs.find((r) => r.id === viewRunId) ?? null;
  const viewReport = open && viewRun ? reportOfStored(open, viewRun) : null;
  const compared = (open?.runs ?? []).filter((r) => compare.includes(r.id));
  const series = compared.map((r) => ({
    label: `${r.label} · ${formatTakenAt(r.takenAt)}`,
    points: r.result.steps
      .map((s) => ({ volts: s.measuredVolts ?? s.volts ?? 0, cents: s.centsFromIdeal ?? 0 }))
      .sort((a, b) => a.volts - b.volts),
  }));

  return (
    <div className="records-panel">
      <div className="records-grid">
        <form className="unit-form" onSubmit={(e) => e.preventDefault()} aria-label="This unit">
          <h2>{open ? `Unit: ${open.unitName}` : 'This unit'}</h2>
          <div className="field">
            <label htmlFor="unit-name">Unit name</label>
            <input
              id="unit-name"
              value={p.info.unitName}
              onChange={(e) => set('unitName')(e.target.value)}
              placeholder="e.g. OL-3 no. 17"
              data-testid="unit-name"
            />
          </div>
          <div className="field">
            <label htmlFor="unit-serial">Serial</label>
            <input
              id="unit-serial"
              value={p.info.serial}
              onChange={(e) => set('serial')(e.target.value)}
              data-testid="unit-serial"
            />
          </div>
          <div className="row">
            <NumberField
              label="Room, °C"
              value={p.info.roomTempC}
              onChange={set('roomTempC')}
              rule={UNIT_RULES.roomTempC}
              testId="unit-room"
            />
            <NumberField
              label="Warm-up, min"
              value={p.info.warmUpMinutes}
              onChange={set('warmUpMinutes')}
              rule={UNIT_RULES.warmUpMinutes}
            />
            <NumberField
              label="Tolerance, ± ¢"
              value={p.info.toleranceCents}
              onChange={set('toleranceCents')}
              rule={UNIT_RULES.toleranceCents}
              placeholder={String(DEFAULT_TOLERANCE_CENTS)}
              testId="unit-tolerance"
            />
          </div>
          <div className="field">
            <label htmlFor="unit-meter">Meter used</label>
            <input
              id="unit-meter"
              value={p.info.meterUsed}
              onChange={(e) => set('meterUsed')(e.target.value)}
              placeholder="make, model, range"
              data-testid="unit-meter"
            />
          </div>
          <div className="field">
            <label htmlFor="unit-notes">Notes</label>
            <textarea
              id="unit-notes"
              value={p.info.notes}
              onChange={(e) => set('notes')(e.target.value)}
              rows={2}
              data-testid="unit-notes"
            />
          </div>
          <div className="row">
            <div className="field">
              <label htmlFor="run-label">Run label</label>
              <input
                id="run-label"
                value={label}
                onChange={(e) => setLabel(e.target.value)}
                list="run-labels"
                data-testid="run-label"
              />
              <datalist id="run-labels">
                <option value="before" />
                <option value="after" />
              </datalist>
            </div>
            <button
              className="primary"
              disabled={!canSave}
              onClick={() => void save()}
              data-testid="save-run"
            >
              {open ? 'Add run to record' : 'Save new record'}
            </button>
            {open && (
              <button
                type="button"
                onClick={() => {
                  setOpen(null);
                  setCompare([]);
                  setViewRunId(null);
                }}
              >
                New unit
              </button>
            )}
          </div>
          {p.result === null && <p className="dim small">Measure a run (or open a WAV) to save it here.</p>}
          {problems.length > 0 && (
            <p className="message warn small">Fix the fields marked invalid before saving.</p>
          )}
          {p.liveReport && (
            <div className="row">
              <span className="dim small">Current run (not saved):</span>
              <button
                type="button"
                onClick={() => p.onExport(p.liveReport!, 'csv')}
                data-testid="export-live-csv"
              >
                Export CSV
              </button>
              <button type="button" onClick={() => p.onExport(p.liveReport!, 'json')}>
                Export JSON
              </button>
              <button type="button" onClick={() => p.onPrint(p.liveReport!)}>
                Print
              </button>
            </div>
          )}
          {message && (
            <p className={`message ${message.kind}`} role="status" data-testid="records-message">
              {message.text}
            </p>
          )}
          <p className="dim small">
            {p.store.kind === 'desktop'
              ? 'Records are kept in the app’s data folder.'
              : 'Records are kept in this browser’s storage.'}
          </p>
        </form>
        <div className="record-list">
          <h2>All units</h2>
          <div className="field">
            <label htmlFor="unit-search">Search units</label>
            <input
              id="unit-search"
              type="search"
              value={query}
              onChange={(e) => setQuery(e.target.value)}
              placeholder="name, serial or notes"
              data-testid="unit-search"
            />
          </div>
          {list.length === 0 ? (
            <p className="dim">No records yet.</p>
          ) : (
            <div className="table-wrap">
              <table className="overview" data-testid="unit-overview">
                <caption className="sr-only">All units with their last run</caption>
                <thead>
                  <tr>
                    <th scope="col">Unit</th>
                    <th scope="col">Last run</th>
                    <th scope="col" className="num">
                      Scale, ¢/oct
                    </th>
                    <th scope="col">Verdict</th>
                    <th scope="col">
                      <span className="sr-only">Actions</span>
                    </th>
                  </tr>
                </thead>
                <tbody>
                  {shown.map(({ summary: s, record }) => {
                    const last = record?.runs.at(-1) ?? null;
                    const v =
                      record && last
                        ? verdictFor(
                            reportOfStored(record, last).result,
                            record.toleranceCents ?? DEFAULT_TOLERANCE_CENTS,
                          )
                        : null;
                    return (
                      <tr key={s.id} className={open?.id === s.id ? 'open' : ''} data-testid="unit-row">
                        <td>
                          <button
                            className="link"
                            onClick={() => (record ? show(record) : void load(s.id))}
                            data-testid="open-unit"
                          >
                            {s.unitName}
                            {s.serial ? ` · ${s.serial}` : ''}
                          </button>
                          <div className="dim small">
                            {s.runCount} run{s.runCount === 1 ? '' : 's'}
                          </div>
                        </td>
                        <td>
                          {last ? (
                            <>
                              {last.label}
                              <div className="dim small">{formatTakenAt(last.takenAt)}</div>
                            </>
                          ) : (
                            '—'
                          )}
                        </td>
                        <td className="num mono">
                          {last?.result.fit ? formatCents(last.result.fit.scaleErrorCentsPerOctave) : '—'}
                        </td>
                        <td>
                          {v ? (
                            <span className={`verdict ${v.kind}`} title={v.text}>
                              {VERDICT_LABELS[v.kind]}
                              {v.worstCents !== null && (
                                <span className="dim small">
                                  {' '}
                                  {v.worstCents.toFixed(1)} / ±
                                  {record?.toleranceCents ?? DEFAULT_TOLERANCE_CENTS} ¢
                                </span>
                              )}
                            </span>
                          ) : (
                            '—'
                          )}
                        </td>
                        <td>
                          {confirmDelete === s.id ? (
                            <span className="confirm" role="alert">
                              Delete {s.unitName} and its {s.runCount} run{s.runCount === 1 ? '' : 's'}?{' '}
                              <button className="small danger" onClick={() => void remove(s.id, s.unitName)}>
                                Delete
                              </button>{' '}
                              <button className="small" onClick={() => setConfirmDelete(null)}>
                                Keep
                              </button>
                            </span>
                          ) : (
                            <button
                              className="small quiet"
                              onClick={() => setConfirmDelete(s.id)}
                              aria-label={`Delete the record of ${s.unitName}`}
                            >
                              Delete…
                            </button>
                          )}
                        </td>
                      </tr>
                    );
                  })}
                </tbody>
              </table>
              {shown.length === 0 && <p className="dim">No unit matches “{query}”.</p>}
            </div>
          )}
          {typeof p.tools === 'function'
            ? p.tools({ onChanged: () => void refresh(), refreshKey: list })
            : p.tools}
        </div>
      </div>
      {open && open.runs.length > 0 && (
        <section className="unit-runs" aria-label={`Runs of ${open.unitName}`}>
          <h2>Runs of {open.unitName}</h2>
          <table className="runs" data-testid="run-list">
            <caption className="sr-only">Choose a run to view, and up to two to compare</caption>
            <thead>
              <tr>
                <th scope="col">View</th>
                <th scope="col">Compare</th>
                <th scope="col">Run</th>
                <th scope="col">Measured</th>
                <th scope="col" className="num">
                  Scale, ¢/oct
                </th>
              </tr>
            </thead>
            <tbody>
              {open.runs.map((r) => (
                <tr key={r.id} className={viewRunId === r.id ? 'open' : ''} data-testid="run-item">
                  <td>
                    <input
                      type="radio"
                      name="view-run"
                      checked={viewRunId === r.id}
                      onChange={() => setViewRunId(r.id)}
                      aria-label={`View run ${r.label} of ${formatTakenAt(r.takenAt)}`}
                      data-testid="view-run"
                    />
                  </td>
                  <td>
                    <input
                      type="checkbox"
                      checked={compare.includes(r.id)}
                      aria-label={`Compare run ${r.label} of ${formatTakenAt(r.takenAt)}`}
                      onChange={(e) =>
                        setCompare((c) =>
                          e.target.checked
                            ? [...c.filter((x) => x !== r.id), r.id].slice(-2)
                            : c.filter((x) => x !== r.id),
                        )
                      }
                    />
                  </td>
                  <td>{r.label}</td>
                  <td>{formatTakenAt(r.takenAt)}</td>
                  <td className="num mono">
                    {r.result.fit ? formatCents(r.result.fit.scaleErrorCentsPerOctave) : '—'}
                  </td>
                </tr>
              ))}
            </tbody>
          </table>
          {compared.length === 2 && <CompareTable a={compared[0]} b={compared[1]} />}
          {series.length > 0 && (
            <div className="chart-wrap">
              <CompareChart series={series} />
            </div>
          )}
        </section>
      )}
      {viewReport && viewRun && (
        <section
          className="saved-run"
          aria-label="Saved run"
          data-testid="saved-run"
          data-run-id={viewRun.id}
        >
          <div className="row saved-run-head">
            <h2 className="grow">
              {viewReport.unitName} · {viewReport.label} · {formatTakenAt(viewReport.takenAt)}
            </h2>
            <button onClick={() => p.onExport(viewReport, 'csv')} data-testid="export-csv">
              Export CSV
            </button>
            <button onClick={() => p.onExport(viewReport, 'json')} data-testid="export-json">
              Export JSON
            </button>
            <button onClick={() => p.onPrint(viewReport)} data-testid="print-report">
              Print report
            </button>
          </div>
          <p
            className={`verdict-line ${verdictFor(viewReport.result, viewReport.toleranceCents).kind}`}
            title={`${trackingBasis(viewReport.toleranceCents)}.`}
          >
            {verdictFor(viewReport.result, viewReport.toleranceCents).text}
          </p>
          <ResultTable
            result={viewReport.result}
            testId="saved-table"
            caption="The saved run’s error table"
          />
          <div className="chart-fit">
            <div className="chart-wrap">
              <StepChart
                planVolts={viewReport.planVolts}
                steps={viewReport.result.rows.map((x) => ({
                  volts: x.volts,
                  centsFromIdeal: x.centsFromIdeal,
                  intervalErrorCents: x.intervalErrorCents,
                  uncertaintyCents: x.uncertaintyCents,
                }))}
              />
            </div>
            <FitSummary result={viewReport.result} />
          </div>
          <AdviceList result={viewReport.result} />
          <details className="budget-details" data-testid="saved-budget">
            <summary>Uncertainty budget</summary>
            <p className="dim small">
              Standard uncertainties in cents (cents per octave for the scale error); U = k·u<sub>c</sub> for
              a coverage of about 95 % (GUM, JCGM 100:2008).
            </p>
            <div className="table-wrap">
              <BudgetTable result={viewReport.result.source} />
            </div>
          </details>
        </section>
      )}
    </div>
  );
}

/** Two runs side by side per voltage: cents from ideal of each and the change. */
function CompareTable(props: { a: Run; b: Run }) {
  const stepVolts = (s: CalibrationResult['steps'][number]) => s.measuredVolts ?? s.volts;
  const volts = [
    ...new Set(
      [...props.a.result.steps, ...props.b.result.steps]
        .map(stepVolts)
        .filter((v): v is number => v !== null),
    ),
  ].sort((x, y) => x - y);
  const at = (r: Run, v: number) => {
    const s = r.result.steps.find((st) => stepVolts(st) === v);
    return s && s.centsFromIdeal !== null ? { centsFromIdeal: s.centsFromIdeal } : null;
  };
  const fa = props.a.result.fit?.scaleErrorCentsPerOctave ?? null;
  const fb = props.b.result.fit?.scaleErrorCentsPerOctave ?? null;
  return (
    <div className="table-wrap">
      <table className="compare-table" data-testid="compare-table">
        <caption className="sr-only">Two runs compared</caption>
        <thead>
          <tr>
            <th scope="col">V</th>
            <th scope="col" className="num">
              {props.a.label}, ¢
            </th>
            <th scope="col" className="num">
              {props.b.label}, ¢
            </th>
            <th scope="col" className="num">
              Change, ¢
            </th>
          </tr>
        </thead>
        <tbody>
          {volts.map((v) => {
            const x = at(props.a, v);
            const y = at(props.b, v);
            return (
              <tr key={v}>
                <td>{v}</td>
                <td className="num mono">{x ? formatCents(x.centsFromIdeal) : '—'}</td>
                <td className="num mono">{y ? formatCents(y.centsFromIdeal) : '—'}</td>
                <td className="num mono">
                  {x && y ? formatCents(y.centsFromIdeal - x.centsFromIdeal) : '—'}
                </td>
              </tr>
            );
          })}
          <tr className="compare-fit">
            <th scope="row">Scale, ¢/oct</th>
            <td className="num mono">{fa === null ? '—' : formatCents(fa)}</td>
            <td className="num mono">{fb === null ? '—' : formatCents(fb)}</td>
            <td className="num mono">{fa !== null && fb !== null ? formatCents(fb - fa) : '—'}</td>
          </tr>
        </tbody>
      </table>
    </div>
  );
}
