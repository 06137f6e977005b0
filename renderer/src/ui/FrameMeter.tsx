/**
 * Frames per second of the page, from requestAnimationFrame intervals over the last second, and the
 * longest frame. Shown small in the status bar; exposed as data attributes for the browser tests.
 */
import { useEffect, useRef, useState } from 'react';

export function FrameMeter() {
  const [fps, setFps] = useState<{ fps: number; worstMs: number } | null>(null);
  const ref = useRef({ frames: 0, start: 0, last: 0, worst: 0 });
  useEffect(() => {
    let id = 0;
    const loop = (t: number) => {
      const r = ref.current;
      if (r.start === 0) {
        r.start = t;
        r.last = t;
      } else {
        r.frames++;
        r.worst = Math.max(r.worst, t - r.last);
        r.last = t;
        if (t - r.start >= 1000) {
          setFps({ fps: (1000 * r.frames) / (t - r.start), worstMs: r.worst });
          r.frames = 0;
          r.start = t;
          r.worst = 0;
        }
      }
      id = requestAnimationFrame(loop);
    };
    id = requestAnimationFrame(loop);
    return () => cancelAnimationFrame(id);
  }, []);
  return (
    <span
      className="fps"
      data-testid="fps"
      data-fps={fps ? fps.fps.toFixed(1) : ''}
      data-worst-ms={fps ? fps.worstMs.toFixed(1) : ''}
    >
      UI {fps ? Math.round(fps.fps) : '—'} fps
    </span>
  );
}
