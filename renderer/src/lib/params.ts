/**
 * Start-up settings from the page's query string, so a run can be set up from a link or a test:
 * `?input=sim&plan=0,1,2,3&unit=ol3-0417&rate=96000&pace=4`.
 */
import { parsePlan } from '../../../dsp/calibration/index.ts';
import { findDemoUnit } from '../../../dsp/sim/index.ts';

/** Start-up settings; absent keys fall back to the app's defaults. */
export interface StartupParams {
  /** `sim` selects the simulated oscillator; anything else (or nothing) the default audio input. */
  readonly input: 'device' | 'sim';
  /** Plan text (already checked by parsePlan), or null. */
  readonly planText: string | null;
  /** Demo unit id for the simulated oscillator, or null. */
  readonly unitId: string | null;
  /** Sample rate of the simulated oscillator, Hz, or null. */
  readonly simRateHz: number | null;
  /**
   * `pace=N`: the simulated oscillator runs N times faster than the clock (1 to 8; 1 when absent), so the
   * browser tests and demos of long plans take less waiting. Everything the engine does is timed in samples,
   * so results are the same at any pace; only waits by the clock (a drive's ramp) last longer in sim time.
   */
  readonly simPace: number;
  /** `drive=sim`: the simulated bench output patched into the simulated oscillator (renderer/src/drive). */
  readonly drive: 'sim' | null;
  /** Problems found in the query, one line each, to show the user. */
  readonly problems: readonly string[];
}

const SIM_RATES = [44_100, 48_000, 88_200, 96_000, 192_000];

/** Fastest pace of the simulated oscillator, times the clock. */
export const MAX_SIM_PACE = 8;

/**
 * Reads the query string. Never throws; bad values are reported in `problems` and ignored.
 *
 * @param search - `location.search`, e.g. `'?input=sim&plan=0,1,2'`.
 * @example parseStartupParams('?input=sim&plan=0,1,2').planText // '0,1,2'
 */
export function parseStartupParams(search: string): StartupParams {
  const q = new URLSearchParams(search);
  const problems: string[] = [];
  const input = q.get('input') === 'sim' ? 'sim' : 'device';
  let planText: string | null = null;
  const plan = q.get('plan');
  if (plan !== null) {
    const p = parsePlan(plan);
    if (p.kind === 'ok') planText = plan;
    else problems.push(`plan in the address: ${p.message}`);
  }
  let unitId: string | null = null;
  const unit = q.get('unit');
  if (unit !== null) {
    if (findDemoUnit(unit)) unitId = unit;
    else problems.push(`unit in the address: no demo unit "${unit}"`);
  }
  let simRateHz: number | null = null;
  const rate = q.get('rate');
  if (rate !== null) {
    const r = Number(rate);
    if (SIM_RATES.includes(r)) simRateHz = r;
    else problems.push(`rate in the address: ${rate} is not one of ${SIM_RATES.join(', ')} Hz`);
  }
  let simPace = 1;
  const pace = q.get('pace');
  if (pace !== null) {
    const n = Number(pace);
    if (Number.isInteger(n) && n >= 1 && n <= MAX_SIM_PACE) simPace = n;
    else problems.push(`pace in the address: "${pace}" is not a whole number from 1 to ${MAX_SIM_PACE}`);
  }
  const driveParam = q.get('drive');
  const drive = driveParam === 'sim' ? 'sim' : null;
  if (driveParam !== null && drive === null)
    problems.push(`drive in the address: "${driveParam}" is not sim`);
  else if (drive === 'sim' && input !== 'sim')
    problems.push('drive=sim needs input=sim: the simulated drive is patched into the simulated oscillator');
  return { input, planText, unitId, simRateHz, simPace, drive, problems };
}
