/**
 * The one number field (lib/fields.ts parses it): a label with its unit, the text as typed, the decimal
 * separator it takes, and, when the text cannot be used, the field marked invalid with the reason.
 */
import { useId, type ReactNode } from 'react';
import { DECIMAL_HINT, parseNumberField, type NumberRule } from '../lib/fields.ts';

export interface NumberFieldProps {
  label: ReactNode;
  value: string;
  onChange(text: string): void;
  rule?: NumberRule;
  placeholder?: string;
  disabled?: boolean;
  testId?: string;
  /** A further problem with a value that parses (from the caller's own checks), or null. */
  problem?: string | null;
  className?: string;
  /** Hide the decimal-separator hint (a compact cell that states it in its label). */
  compact?: boolean;
  onCommit?(): void;
  ariaLabel?: string;
}

export function NumberField(p: NumberFieldProps) {
  const id = useId();
  const parsed = parseNumberField(p.value, p.rule);
  const reason = parsed.kind === 'invalid' ? parsed.reason : (p.problem ?? null);
  const hintId = `${id}-hint`;
  const errId = `${id}-err`;
  return (
    <div className={`field number-field ${reason ? 'invalid' : ''} ${p.className ?? ''}`}>
      <label htmlFor={id}>{p.label}</label>
      <input
        id={id}
        value={p.value}
        onChange={(e) => p.onChange(e.target.value)}
        onBlur={p.onCommit}
        onKeyDown={(e) => {
          if (e.key === 'Enter') p.onCommit?.();
        }}
        inputMode="decimal"
        placeholder={p.placeholder}
        disabled={p.disabled}
        data-testid={p.testId}
        aria-invalid={reason !== null}
        aria-label={p.ariaLabel}
        aria-describedby={`${p.compact ? '' : hintId} ${reason ? errId : ''}`.trim() || undefined}
      />
      {!p.compact && (
        <span className="field-hint" id={hintId}>
          {DECIMAL_HINT}
        </span>
      )}
      {reason && (
        <span className="field-error" id={errId} role="alert">
          {reason}
        </span>
      )}
    </div>
  );
}
