// Bounds a long series: it keeps its first and last points and an even spread between them, so
// a chart keeps its shape while the page stays small, and a curve fit keeps its span while its
// search stays affordable.

/** Indices 0..length-1, at most `pointsMax` of them, evenly spread, always first and last. */
export function thinIndices(length: number, pointsMax: number): number[] {
  if (!Number.isInteger(pointsMax) || pointsMax < 2)
    throw new RangeError(`thinIndices: pointsMax must be an integer >= 2, got ${pointsMax}`);
  if (length <= pointsMax) return Array.from({ length }, (_, i) => i);
  const indices: number[] = [];
  const step = (length - 1) / (pointsMax - 1);
  for (let j = 0; j < pointsMax; j++) indices.push(Math.round(j * step));
  return indices;
}

/** The items at thinIndices(items.length, pointsMax). */
export function thin<T>(items: readonly T[], pointsMax: number): T[] {
  return thinIndices(items.length, pointsMax).map((i) => items[i]);
}
