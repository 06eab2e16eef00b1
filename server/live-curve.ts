// The evaluated curve (round, f - f*) that the live measured rate is fitted to, in bounded
// memory: every point while there are at most POINTS_MAX, then an even thinning that keeps the
// first point, the latest and an evenly strided spread between them. A run's summary fits the
// whole curve, read back from rounds.jsonl at the end; the live gauge gives the same value as
// long as the curve has at most POINTS_MAX points, and after that the fit of a thinned curve,
// which keeps the curve's span and shape (the fit itself thins to 2048 points for its search).

import type { CurvePoint } from '../src/theory/measure-curve.js';

/** Points kept at most (before the latest); even, so that halving keeps the stride regular. */
export const POINTS_MAX = 4096;

export class LiveCurve {
  /** the evaluated points whose index is a multiple of `stride`, in round order */
  private kept: CurvePoint[] = [];
  private stride = 1;
  private seen = 0;
  private latest: CurvePoint | null = null;
  /** a non-finite value ended the curve (a diverged run): later points are not part of it */
  private cut = false;

  /** One evaluated round; a non-finite value ends the curve, as the summary's curveOf does. */
  add(round: number, suboptimality: number): void {
    if (this.cut) return;
    if (!Number.isFinite(suboptimality)) {
      this.cut = true;
      return;
    }
    const point = { round, suboptimality };
    if (this.seen % this.stride === 0) {
      this.kept.push(point);
      if (this.kept.length >= POINTS_MAX) {
        this.kept = this.kept.filter((_, i) => i % 2 === 0);
        this.stride *= 2;
      }
    }
    this.seen++;
    this.latest = point;
  }

  /** Evaluated points added so far: a changed count means a changed curve. */
  count(): number {
    return this.seen;
  }

  /** The curve to fit: the kept points, then the latest if it was not kept. */
  points(): CurvePoint[] {
    const last = this.kept[this.kept.length - 1];
    return this.latest === null || last === this.latest
      ? [...this.kept]
      : [...this.kept, this.latest];
  }
}
