/** Column heads of the error table, shared by the live run, the recording and the saved-run views. */

/** Explanations of the columns, shown as tooltips and read by screen readers. */
export const COLUMN_HELP = {
  set: 'The voltage the plan asks for, volts',
  meter: 'The voltage your meter read at the input jack, volts (used instead of the set voltage when given)',
  ideal: 'Pitch against the ideal 1 V/oct line through the lowest step, cents',
  interval: 'Error of the interval from the next lower voltage, cents (positive: the octave is wide)',
  sigma:
    'Standard uncertainty of the pitch reading alone, cents (1σ): estimator, the oscillator’s repeatability and settling. The step’s whole budget (voltage, meter, clock) and its expanded uncertainty are in the budget table.',
} as const;

export function ErrorTableHead(props: { last: string | null; lastLabel?: string }) {
  return (
    <thead>
      <tr>
        <th scope="col" title="Step, in the order played">
          #
        </th>
        <th scope="col" title={COLUMN_HELP.set}>
          Set, V
        </th>
        <th scope="col" title={COLUMN_HELP.meter}>
          Meter, V
        </th>
        <th scope="col" className="num">
          Hz
        </th>
        <th scope="col">Note</th>
        <th scope="col" className="num" title={COLUMN_HELP.ideal}>
          From ideal, ¢
        </th>
        <th scope="col" className="num" title={COLUMN_HELP.interval}>
          Interval err., ¢
        </th>
        <th scope="col" className="num" title={COLUMN_HELP.sigma}>
          u reading, ¢
        </th>
        {props.last === null ? (
          <th scope="col">
            <span className="sr-only">{props.lastLabel ?? 'Actions'}</span>
          </th>
        ) : (
          <th scope="col" className="num">
            {props.last}
          </th>
        )}
      </tr>
    </thead>
  );
}
