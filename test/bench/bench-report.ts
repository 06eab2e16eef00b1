// The document `npm run bench` prints: one JSON object, schema version 1, describing the machine
// and every measured figure. The zod schema is the one definition of its shape; the bench
// validates its own output against it before printing, and a test does the same on a tiny run.

import { cpus, platform, arch, totalmem } from 'node:os';
import { z } from 'zod';

const shapeValue = z.union([z.number(), z.string()]);

/** A comparison figure measured in the same run, and how many times better the result is. */
export const benchReferenceSchema = z.strictObject({
  /** what the figure was measured on, e.g. "full sort" */
  against: z.string().min(1),
  figure: z.number().positive(),
  /** result figure / reference figure, both in the result's unit (higher is better) */
  ratio: z.number().positive(),
  /** the reference's figure from its process CPU time, beside cpuFigure of the result */
  cpuFigure: z.number().positive().optional(),
  /** result cpuFigure / reference cpuFigure: steadier than `ratio` on a loaded machine */
  cpuRatio: z.number().positive().optional(),
  /** whether the reference computed the same bits as the result (when both compute one vector) */
  sameBits: z.boolean().optional(),
});

export const benchResultSchema = z.strictObject({
  /** the part of the code measured: vec, problem, compress, memory */
  suite: z.string().min(1),
  /** what was measured, e.g. "dot" or "gradient least-squares" */
  case: z.string().min(1),
  /** the problem's sizes, e.g. {d: 1000} */
  shape: z.record(z.string(), shapeValue),
  /** a throughput, the median of repeated batches (higher is better), or, where `better` is "lower", a duration or a size */
  figure: z.number().positive(),
  unit: z.string().min(1),
  /** "lower" for a figure where less is better (seconds of a setup); absent means higher */
  better: z.literal('lower').optional(),
  /** the figure from the process's CPU time instead of wall time (other load stretches wall time) */
  cpuFigure: z.number().positive().optional(),
  reference: benchReferenceSchema.optional(),
  /** why a case that has a reference was measured without it this time (e.g. no C compiler) */
  referenceSkipped: z.string().min(1).optional(),
});

export const benchMachineSchema = z.strictObject({
  node: z.string(),
  platform: z.string(),
  arch: z.string(),
  cpuModel: z.string(),
  cpuCount: z.number().int().positive(),
  memoryBytes: z.number().int().positive(),
});

export const BENCH_REPORT_VERSION = 1;

export const benchReportSchema = z.strictObject({
  roundwireBench: z.literal(BENCH_REPORT_VERSION),
  machine: benchMachineSchema,
  results: z.array(benchResultSchema).min(1),
});

export type BenchReference = z.infer<typeof benchReferenceSchema>;
export type BenchResult = z.infer<typeof benchResultSchema>;
export type BenchReport = z.infer<typeof benchReportSchema>;

export function thisMachine(): BenchReport['machine'] {
  const cores = cpus();
  return {
    node: process.version,
    platform: platform(),
    arch: arch(),
    cpuModel: cores[0]?.model ?? 'unknown',
    cpuCount: Math.max(1, cores.length),
    memoryBytes: totalmem(),
  };
}

/** The report for these results, checked against the schema (throws naming the bad field). */
export function benchReport(results: BenchResult[]): BenchReport {
  return benchReportSchema.parse({
    roundwireBench: BENCH_REPORT_VERSION,
    machine: thisMachine(),
    results,
  });
}
