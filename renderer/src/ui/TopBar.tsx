/**
 * The top bar: name, the screens, the engine's status in words (one source: the engine's view), the
 * theme switch and the bench view.
 */
import type { EngineView } from '../engine/client.ts';
import type { Theme } from '../hooks/useTheme.ts';
import { formatClock } from '../../../dsp/format/index.ts';
import { FrameMeter } from './FrameMeter.tsx';

export type Tab = 'run' | 'scale-pair' | 'drift' | 'book';

export const TABS: readonly { id: Tab; label: string }[] = [
  { id: 'run', label: 'Span run' },
  { id: 'scale-pair', label: 'Scale pair' },
  { id: 'drift', label: 'Hold & drift' },
  { id: 'book', label: 'Unit book' },
];

/** What the input is, in words. */
export function sourceText(view: EngineView): string {
  const rate = view.source.sampleRateHz ? ` · ${view.source.sampleRateHz.toLocaleString('en-US')} Hz` : '';
  return view.source.kind === 'sim'
    ? `Simulator${rate}`
    : view.source.kind === 'live'
      ? `Audio input${rate}`
      : 'No input';
}

/** Why blocks were dropped, in words (shown beside the count). */
export const DROPPED_EXPLAINED =
  'The computer fell behind and some audio blocks were not analysed; readings that covered them were discarded, so no figure uses them.';

export function TopBar(props: {
  view: EngineView;
  tab: Tab;
  onTab(t: Tab): void;
  theme: Theme;
  onTheme(t: Theme): void;
  onBenchView(): void;
}) {
  const { view } = props;
  const stats = view.stats;
  return (
    <header className="topbar">
      <div className="brand">
        <svg className="logo" viewBox="0 0 32 32" width="24" height="24" aria-hidden="true">
          <path
            d="M5 25 L11 19 L17 13 L23 7"
            stroke="currentColor"
            strokeWidth="3"
            fill="none"
            strokeLinecap="round"
          />
          <circle cx="5" cy="25" r="2.6" className="logo-dot" />
          <circle cx="14" cy="16" r="2.6" className="logo-dot" />
          <circle cx="23" cy="7" r="2.6" className="logo-dot" />
        </svg>
        Spanmeter
      </div>
      <nav className="tabs" aria-label="Screens">
        {TABS.map((t) => (
          <button
            key={t.id}
            aria-current={props.tab === t.id ? 'page' : undefined}
            className={props.tab === t.id ? 'on' : ''}
            onClick={() => props.onTab(t.id)}
            data-testid={`tab-${t.id}`}
          >
            {t.label}
          </button>
        ))}
      </nav>
      <div className="status" data-testid="engine-stats">
        <span>{sourceText(view)}</span>
        <span title="Time since the input started">{formatClock(view.streamSeconds)}</span>
        <span
          data-testid="engine-load"
          title="Share of real time the pitch engine needs"
          data-load-percent={stats ? stats.loadPercent.toFixed(2) : ''}
          data-sim-load-percent={stats ? stats.simLoadPercent.toFixed(2) : ''}
          data-max-capture-ms={stats ? stats.maxCaptureMs.toFixed(1) : ''}
          data-rate={stats ? String(stats.sampleRateHz) : ''}
        >
          engine {stats ? `${stats.loadPercent.toFixed(1)} %` : '—'}
        </span>
        {stats && stats.droppedBlocks > 0 && (
          <span className="warn-text" title={DROPPED_EXPLAINED} data-testid="dropped">
            {stats.droppedBlocks} audio blocks skipped (computer fell behind; affected readings discarded)
          </span>
        )}
        <FrameMeter />
      </div>
      <div className="topbar-actions">
        <button
          onClick={() => props.onTheme(props.theme === 'dark' ? 'light' : 'dark')}
          data-testid="theme-toggle"
          aria-label={`Switch to the ${props.theme === 'dark' ? 'light' : 'dark'} theme`}
        >
          {props.theme === 'dark' ? '☀ Light' : '☾ Dark'}
        </button>
        <button onClick={props.onBenchView} data-testid="bench-view-open-top">
          Bench view
        </button>
      </div>
    </header>
  );
}
