/**
 * Scale pair and drift hold give instructions only from readings taken after they were opened: the
 * engine driven directly in Node with the simulated oscillator (dsp/sim/simulate.ts). The unit ol3-0417 has
 * octaves 4.2 cents wide, so its 1 V to 3 V pair reads about +8.4 cents (cents after A. J. Ellis, 1885);
 * anything near 6 octaves (the run's last 7 V against 1 V) would be a stale or wrong voltage.
 */
import { describe, expect, it } from 'vitest';
import { PAIR_GUARD_CENTS } from '../renderer/src/engine/core.ts';
import type { ScalePairView } from '../renderer/src/engine/protocol.ts';
import { simOptions, simSettingsForUnit } from '../renderer/src/lib/sim-settings.ts';
import { engineHarness } from './helpers/engine.ts';

describe('the scale pair after a run on another voltage', () => {
  it('no instruction before its own pair has settled, and every instruction is the pair’s', () => {
    const { core, messages } = engineHarness();
    const options = simOptions(simSettingsForUnit('ol3-0417'));
    core.handle({ type: 'source-sim', sampleRateHz: 48_000, options, volts: 7 });
    core.handle({
      type: 'scale-pair-config',
      config: { voltsLow: 1, voltsHigh: 3, toleranceCents: 1, alternateSeconds: 3 },
    });
    // Sit on 7 V long enough to settle there, as at the end of a run.
    for (let i = 0; i < 40; i++) core.tickSim(0.05);
    const from = messages.length;
    core.handle({ type: 'mode', mode: 'scale-pair' });
    for (let i = 0; i < 300; i++) core.tickSim(0.05);
    const views = messages
      .slice(from)
      .flatMap((m) => (m.type === 'tick' && m.scalePair ? [m.scalePair] : [])) as ScalePairView[];
    const withResult = views.filter((v) => v.result !== null);
    expect(withResult.length).toBeGreaterThan(0);
    for (const v of withResult) {
      // About +8.4 cents (2 octaves × 4.2 cents per octave).
      expect(Math.abs(v.result!.errorCents - 8.4)).toBeLessThan(1);
    }
    // The first views, before both voltages have settled, carry no instruction.
    expect(views[0].result).toBeNull();
    expect(PAIR_GUARD_CENTS).toBe(150);
  });
});
