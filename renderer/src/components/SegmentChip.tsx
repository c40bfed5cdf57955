import type { SegmentProfile } from '../../../src/api/contract.js';
import { colourOf } from '../charts/segment-charts.js';

/** A segment's name with its colour swatch, the same everywhere it is mentioned. */
export function SegmentChip({ segment, fallback = '—' }: { segment: SegmentProfile | undefined; fallback?: string }) {
  if (!segment) return <span className="chip chip-none">{fallback}</span>;
  return (
    <span className="chip">
      <span className="swatch" style={{ background: colourOf(segment) }} aria-hidden="true" />
      <span className="chip-name" title={segment.name}>
        {segment.name}
      </span>
    </span>
  );
}
