/**
 * The one picker of an audio device or port: a labelled list with the system's default first and the
 * devices the page can see after it (the browser's own 'default' and unnamed entries left out, since
 * the first row already stands for them). Used for the drive's output and its MIDI port; the input
 * panel's device list is the same shape.
 */
export interface PickerDevice {
  readonly id: string;
  readonly label: string;
}

export function DevicePicker(p: {
  label: string;
  value: string;
  onChange(id: string): void;
  devices: readonly PickerDevice[];
  /** The first row (the system default, or what to show when there is nothing to pick), or null. */
  first: PickerDevice | null;
  testId?: string;
  disabled?: boolean;
}) {
  return (
    <label className="field grow">
      <span>{p.label}</span>
      <select
        value={p.value}
        onChange={(e) => p.onChange(e.target.value)}
        disabled={p.disabled}
        data-testid={p.testId}
      >
        {p.first && <option value={p.first.id}>{p.first.label}</option>}
        {p.devices
          .filter((d) => d.id !== 'default' && d.id !== '')
          .map((d) => (
            <option key={d.id} value={d.id}>
              {d.label}
            </option>
          ))}
      </select>
    </label>
  );
}
