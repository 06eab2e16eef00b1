// The document `npm run bench` prints: one JSON object, schema version 2, describing the machine
// and every measured figure. The zod schema is the one definition of its shape; the bench
// validates its own output against it before printing, and a test does the same on a tiny run.
// Version 2 added a result's `target` (the figure or ratio it is meant to reach, and whether it
// did) and `parts` (a figure that is a sum, by its parts: the peak RSS of a run by process).

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

/** Whether `value` reaches `target` in the direction of its result (higher is better unless "lower"). */
export function targetMet(value: number, target: number, better: 'lower' | undefined): boolean {
  return better === 'lower' ? value <= target : value >= target;
}

/** What a result is meant to reach; `met` is judged in the result's direction (`better`). */
export const benchTargetSchema = z.strictObject({
  /** whether the target bounds the result's figure or its reference ratio */
  appliesTo: z.enum(['figure', 'ratio']),
  figure: z.number().positive(),
  /** the result's unit for a figure; "x" for a ratio */
  unit: z.string().min(1),
  met: z.boolean(),
});

/** Relative slack of a figure against the sum of its parts: float addition in another order. */
const PARTS_SUM_RELATIVE = 1e-9;

export const benchResultSchema = z
  .strictObject({
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
    target: benchTargetSchema.optional(),
    /** a figure that is a sum, by its parts in the figure's unit (e.g. peak RSS by process) */
    parts: z.record(z.string(), z.number().nonnegative()).optional(),
  })
  .superRefine((result, ctx) => {
    const { target, parts } = result;
    if (target !== undefined) {
      const value = target.appliesTo === 'figure' ? result.figure : result.reference?.ratio;
      if (value === undefined)
        ctx.addIssue({
          code: 'custom',
          path: ['target'],
          message: 'a ratio target needs a reference',
        });
      else if (target.met !== targetMet(value, target.figure, result.better))
        ctx.addIssue({
          code: 'custom',
          path: ['target', 'met'],
          message: `says ${target.met}, but ${value} against ${target.figure} (${result.better ?? 'higher'} is better) is ${!target.met}`,
        });
      const unit = target.appliesTo === 'figure' ? result.unit : 'x';
      if (target.unit !== unit)
        ctx.addIssue({
          code: 'custom',
          path: ['target', 'unit'],
          message: `expected "${unit}", got "${target.unit}"`,
        });
    }
    if (parts !== undefined) {
      const sum = Object.values(parts).reduce((a, b) => a + b, 0);
      if (Math.abs(sum - result.figure) > PARTS_SUM_RELATIVE * result.figure)
        ctx.addIssue({
          code: 'custom',
          path: ['parts'],
          message: `the parts add up to ${sum}, the figure is ${result.figure}`,
        });
    }
  });

export const benchMachineSchema = z.strictObject({
  node: z.string(),
  platform: z.string(),
  arch: z.string(),
  cpuModel: z.string(),
  cpuCount: z.number().int().positive(),
  memoryBytes: z.number().int().positive(),
});

export const BENCH_REPORT_VERSION = 2;

export const benchReportSchema = z.strictObject({
  roundwireBench: z.literal(BENCH_REPORT_VERSION),
  machine: benchMachineSchema,
  results: z.array(benchResultSchema).min(1),
});

export type BenchReference = z.infer<typeof benchReferenceSchema>;
export type BenchTarget = z.infer<typeof benchTargetSchema>;
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

/** A target for `value` (the result's figure or reference ratio), judged in the direction `better`. */
export function benchTarget(
  appliesTo: BenchTarget['appliesTo'],
  figure: number,
  unit: string,
  value: number,
  better: 'lower' | undefined,
): BenchTarget {
  return { appliesTo, figure, unit, met: targetMet(value, figure, better) };
}

/** The report for these results, checked against the schema (throws naming the bad field). */
export function benchReport(results: BenchResult[]): BenchReport {
  return benchReportSchema.parse({
    roundwireBench: BENCH_REPORT_VERSION,
    machine: thisMachine(),
    results,
  });
}
