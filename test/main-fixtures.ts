// Shared fixtures for the main-process tests. The unit, its serial and notes are an invented demo
// scenario; the frequencies are derived, not invented (see sampleRun).
import { calibrate } from '../dsp/calibration/index.ts';
import { RECORD_SCHEMA_VERSION, type UnitRecord, type UnitRecordDraft } from '../main/ipc-contract.ts';

/** C2 in 12-TET with A4 = 440 Hz: 440·2^((36 − 69)/12) = 65.4064 Hz (ISO 16:1975 tuning, MIDI note 36). */
export const C2_HZ = 440 * 2 ** ((36 - 69) / 12);

/** A run over 0–4 V of an ideal 1 V/oct oscillator pivoted at C2: f = C2·2^V. */
export function sampleRun(id = '3f2a9c1e-0b7d-4e5a-9c61-2d8e4f7a1b90', label = 'before') {
  const volts = [0, 1, 2, 3, 4];
  return {
    id,
    takenAt: '2031-03-14T09:30:00.000Z',
    label,
    plan: { volts },
    // The one result shape (dsp/calibration/result.ts), made by the one pipeline.
    result: calibrate(
      volts.map((v, i) => ({
        index: i,
        volts: v,
        measuredVolts: null,
        rawHz: C2_HZ * 2 ** v,
        uncertaintyCents: 0.05,
      })),
    ).result,
  };
}

/** A new record (no id yet) for the invented bench unit "Kestrel VCO rev C". */
export function sampleDraft(overrides: Partial<UnitRecordDraft> = {}): UnitRecordDraft {
  return {
    schemaVersion: RECORD_SCHEMA_VERSION,
    unitName: 'Kestrel VCO rev C',
    serial: 'KS-0042',
    notes: 'Left on the bench overnight before the first run.',
    roomTempC: 22.5,
    meterUsed: '4½-digit bench meter, 20 V range',
    warmUpMinutes: 30,
    runs: [sampleRun()],
    ...overrides,
  };
}

/** A complete stored record. */
export function sampleRecord(overrides: Partial<UnitRecord> = {}): UnitRecord {
  return {
    ...(sampleDraft() as UnitRecord),
    id: 'kestrel-vco-rev-c-k3m9x2qa',
    createdAt: '2031-03-14T09:00:00.000Z',
    updatedAt: '2031-03-14T10:00:00.000Z',
    ...overrides,
  };
}
