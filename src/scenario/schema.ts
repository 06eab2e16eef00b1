// The scenario's shape, defined here and nowhere else: every other module uses the types
// inferred from this schema, and scenarios/schema.json is generated from it for editors.
// Defaults live here too, so that a resolved scenario is always complete and explicit.

import { z } from 'zod';
import {
  DATASET_NAMES,
  DATASET_TARGET_NAMES,
  datasetChoice,
  datasetTargetName,
} from './dataset-choices.js';
import { repeatsSchema } from './repeats-schema.js';

const positiveInt = z.number().int().positive();
const nonNegative = z.number().nonnegative();
const positive = z.number().positive();
const probability = z.number().min(0).max(1);

/**
 * The limits of single fields that sizes and work follow from. Each is a limit that works:
 * README.md, "Limits", gives the memory each implies. Products of sizes (samples x features, the
 * state a prediction walks, rounds x clients for the records) are bounded where they are known,
 * by the memory estimate and the records limit (src/engine).
 */
export const SCENARIO_LIMITS = {
  /** data.features; least squares at d = 100,000 runs in a few hundred MiB with few samples */
  featuresMax: 100_000,
  /**
   * the model's dimension: features, times classes for softmax, every weight and bias for a
   * perceptron (784 inputs, 64 hidden units and 10 classes is 50,890)
   */
  dimensionMax: 100_000,
  /** softmax and perceptron classes */
  classesMax: 1000,
  /** a perceptron's hidden layers */
  hiddenLayersMax: 2,
  /** units of one hidden layer; the dimension limit above is usually the binding one */
  hiddenWidthMax: 4096,
  /** clients.count; the welcome carries per-client lists of this length within its 4 MiB */
  clientsMax: 10_000,
  /** n_i of one client: its shard is a row matrix of n_i x features */
  samplesPerClientMax: 1_000_000,
  /** tau_i, and the deadline policy's stepsMax: a round's work per client */
  localStepsMax: 100_000,
  /** run.rounds */
  roundsMax: 1_000_000,
  /** run.workers */
  workersMax: 256,
} as const;

/**
 * A count per client: one integer for all, a list (one per client), or a seeded uniform range;
 * every count at most `max` (named `what` in the refusal).
 */
function countSpecUpTo(max: number, what: string) {
  return z
    .union([
      positiveInt,
      z.array(positiveInt).min(1),
      z
        .object({ uniform: z.tuple([positiveInt, positiveInt]) })
        .strict()
        .refine((u) => u.uniform[0] <= u.uniform[1], {
          message: 'uniform: min must not exceed max',
        }),
    ])
    .superRefine((spec, ctx) => {
      const counts = typeof spec === 'number' ? [spec] : Array.isArray(spec) ? spec : spec.uniform;
      const largest = Math.max(...counts);
      if (largest > max)
        ctx.addIssue({
          code: 'custom',
          message: `${largest} ${what} is above the limit of ${max}`,
        });
    });
}
export type CountSpec = z.infer<ReturnType<typeof countSpecUpTo>>;

export const problemSchema = z
  .object({
    kind: z.enum(['least-squares', 'logistic', 'softmax', 'perceptron']),
    /** lambda of the L2 term (lambda/2)||x||^2 (for a perceptron, over every weight and bias) */
    regularization: nonNegative.default(1e-3),
    /** softmax and perceptron: number of classes */
    classes: z.number().int().min(2).max(SCENARIO_LIMITS.classesMax).default(3),
    /**
     * perceptron only, and required there: units of each hidden layer from the input side, one
     * or two layers
     */
    hiddenWidths: z
      .array(positiveInt.max(SCENARIO_LIMITS.hiddenWidthMax))
      .min(1)
      .max(SCENARIO_LIMITS.hiddenLayersMax)
      .optional(),
    /** perceptron only, and required there: the hidden units' smooth activation */
    activation: z.enum(['tanh', 'softplus']).optional(),
  })
  .strict()
  .superRefine((problem, ctx) => {
    // Required for one kind and meaningless for the others: no default, so that a scenario
    // always says which network it trains and a convex problem never carries a network's shape.
    for (const field of ['hiddenWidths', 'activation'] as const) {
      const given = problem[field] !== undefined;
      if (problem.kind === 'perceptron' && !given)
        ctx.addIssue({
          code: 'custom',
          path: [field],
          message: `a perceptron needs problem.${field}`,
        });
      if (problem.kind !== 'perceptron' && given)
        ctx.addIssue({
          code: 'custom',
          path: [field],
          message: `problem.${field} belongs to kind "perceptron" only, not "${problem.kind}"`,
        });
    }
  });

export const partitionSchema = z.discriminatedUnion('kind', [
  z.object({ kind: z.literal('iid') }).strict(),
  z.object({ kind: z.literal('dirichlet'), alpha: positive }).strict(),
  z.object({ kind: z.literal('shards'), classesPerClient: positiveInt }).strict(),
  z.object({ kind: z.literal('natural'), key: z.string().min(1) }).strict(),
]);

const testFraction = z.number().min(0).lt(1).default(0);

export const syntheticDataSchema = z
  .object({
    source: z.literal('synthetic'),
    features: positiveInt.max(SCENARIO_LIMITS.featuresMax).default(20),
    /** samples per client: quantity skew comes from a list or a range */
    samplesPerClient: countSpecUpTo(SCENARIO_LIMITS.samplesPerClientMax, 'samples').default(100),
    /** spread of the clients' own minimizers around a common centre; 0 gives one common minimizer */
    minimizerSpread: nonNegative.default(0),
    /** condition number of the feature covariance (1 = isotropic) */
    conditionNumber: z.number().min(1).default(1),
    /** scale of each client's random shift of the feature mean (covariate shift) */
    covariateShift: nonNegative.default(0),
    /** standard deviation of target noise (least squares) */
    noise: nonNegative.default(0.1),
    /** labelled problems only: how labels are spread over clients */
    partition: partitionSchema.default({ kind: 'iid' }),
    /**
     * the fraction of each client's rows held out as its test part (seeded); the model trains,
     * and the oracle solves, on the rest; 0 holds nothing out
     */
    testFraction: testFraction,
  })
  .strict();

export const datasetDataSchema = z
  .object({
    source: z.literal('dataset'),
    /** a data set that an installed package ships */
    name: z.enum(DATASET_NAMES),
    /** what the model learns; absent: the data set's first target (src/scenario/dataset-choices.ts) */
    target: z.enum(DATASET_TARGET_NAMES).optional(),
    /** natural: the key must be one of the data set's, and clients.count its number of values */
    partition: partitionSchema.default({ kind: 'iid' }),
    /**
     * scale features to zero mean and unit variance over the training rows (the whole data set
     * when nothing is held out), computed after partitioning and applied to every row; absent: the data set's default (yes, except digits, whose pixels are already in [0, 1])
     */
    standardize: z.boolean().optional(),
    /**
     * the fraction of each client's rows held out as its test part (seeded); the model trains,
     * and the oracle solves, on the rest; 0 holds nothing out
     */
    testFraction: testFraction,
  })
  .strict();

const columnName = z.string().min(1).max(200);

/** The limits of a data file of the user's own (src/data/data-file-*.ts). */
export const DATA_FILE_LIMITS = {
  /** bytes of the file, read whole into memory */
  bytesMax: 256 * 1024 * 1024,
  /** columns the scenario may name in features, categorical and allBut */
  columnsNamedMax: 1000,
  /** distinct values of one categorical column: each is a 0/1 feature */
  levelsMax: 1000,
} as const;

export const fileDataSchema = z
  .object({
    source: z.literal('file'),
    /**
     * the data file, read by every process itself (raw data never crosses the wire); a relative
     * path resolves against the scenario file's folder, or the working folder for a --tweak
     */
    path: z.string().min(1).max(4096),
    /** csv: a header line of column names, then one row a line; jsonl: one JSON object a line */
    format: z.enum(['csv', 'jsonl']),
    /**
     * the column the model learns: a number for least squares, a class label for the
     * classifiers (labels numbered 0..k-1 in sorted order)
     */
    target: columnName,
    /** feature columns: a list of names, or {allBut: [...]}: every column but these, the target and the key */
    features: z.union([
      z.array(columnName).min(1).max(DATA_FILE_LIMITS.columnsNamedMax),
      z.object({ allBut: z.array(columnName).max(DATA_FILE_LIMITS.columnsNamedMax) }).strict(),
    ]),
    /** feature columns holding categories: one 0/1 feature per value, values in sorted order */
    categorical: z.array(columnName).max(DATA_FILE_LIMITS.columnsNamedMax).default([]),
    /** a row with an empty feature or target: refused (an error naming it) or dropped and counted */
    missing: z.enum(['refuse', 'drop']).default('refuse'),
    /** scale numeric features to zero mean and unit variance over the training rows */
    standardize: z.boolean().default(true),
    /** natural: the key is a column; one client per distinct value, in sorted order */
    partition: partitionSchema.default({ kind: 'iid' }),
    /**
     * the fraction of each client's rows held out as its test part (seeded); the model trains,
     * the oracle solves and the standardization measures on the rest; 0 holds nothing out
     */
    testFraction: testFraction,
    /**
     * SHA-256 of the file's bytes, hex: filled in when the scenario is loaded; a value given
     * here pins the file, and every process refuses a file with another hash
     */
    sha256: z
      .string()
      .regex(/^[0-9a-f]{64}$/)
      .optional(),
  })
  .strict();

export const dataSchema = z.discriminatedUnion('source', [
  syntheticDataSchema,
  datasetDataSchema,
  fileDataSchema,
]);

export const clientsSchema = z
  .object({
    count: positiveInt.max(SCENARIO_LIMITS.clientsMax),
    /** p_i: by sample count (n_i/n) or uniform (1/m) */
    weights: z.enum(['samples', 'uniform']).default('samples'),
  })
  .strict();

export const gradientSchema = z.union([
  z.literal('full'),
  z.object({ minibatch: positiveInt }).strict(),
]);

export const methodSchema = z
  .object({
    name: z.enum(['gd', 'fedavg', 'fedprox', 'fednova', 'scaffold', 'fedlin', 'fedsplit']),
    /** tau_i: one count, one per client, or a seeded range */
    localSteps: countSpecUpTo(SCENARIO_LIMITS.localStepsMax, 'local steps').default(1),
    /** local step size eta; 'auto' uses 1/L of the global objective */
    stepSize: z.union([positive, z.literal('auto')]).default('auto'),
    /** fixed eta, or eta/tau_i */
    stepPolicy: z.enum(['fixed', 'inverse-steps']).default('fixed'),
    /** eta_g */
    serverStepSize: positive.default(1),
    gradient: gradientSchema.default('full'),
    /** fraction of clients drawn (seeded) to take part in each round */
    participation: z.number().gt(0).max(1).default(1),
    /** FedProx proximal coefficient mu_prox */
    proxCoefficient: nonNegative.default(0.1),
    /** FedSplit: inner steps solve each prox until the gradient norm is below this, within tau_i */
    proxTolerance: nonNegative.default(0),
  })
  .strict();

export const compressorSchema = z
  .object({
    kind: z.enum(['none', 'top-k', 'rand-k']).default('none'),
    /** keep this fraction of the entries (k = ceil(fraction d)) */
    fraction: z.number().gt(0).max(1).optional(),
    /** or keep exactly this many entries */
    count: positiveInt.optional(),
    errorFeedback: z.boolean().default(true),
    /** rand-k only: scale kept entries by d/k (unbiased) or not */
    unbiased: z.boolean().default(false),
    /** value width on the wire */
    values: z.enum(['f64', 'f32']).default('f64'),
  })
  .strict()
  .refine((c) => !(c.fraction !== undefined && c.count !== undefined), {
    message: 'give either fraction or count, not both',
  })
  .refine((c) => c.kind === 'none' || c.fraction !== undefined || c.count !== undefined, {
    message: 'top-k and rand-k need a fraction or a count',
  });
export type CompressorSpec = z.infer<typeof compressorSchema>;

export const channelSchema = z
  .object({
    /** the compressor for every field of this direction */
    default: compressorSchema.default({
      kind: 'none',
      errorFeedback: true,
      unbiased: false,
      values: 'f64',
    }),
    /** per-field overrides, by field name (e.g. "gradient", "delta") */
    fields: z.record(z.string(), compressorSchema).default({}),
  })
  .strict();

export const compressionSchema = z
  .object({
    uplink: channelSchema.default({
      default: { kind: 'none', errorFeedback: true, unbiased: false, values: 'f64' },
      fields: {},
    }),
    downlink: channelSchema.default({
      default: { kind: 'none', errorFeedback: true, unbiased: false, values: 'f64' },
      fields: {},
    }),
  })
  .strict();

export const slowdownSchema = z.discriminatedUnion('kind', [
  z.object({ kind: z.literal('constant'), value: z.number().min(1).default(1) }).strict(),
  z
    .object({ kind: z.literal('uniform'), min: z.number().min(1), max: z.number().min(1) })
    .strict()
    .refine((u) => u.min <= u.max, { message: 'min must not exceed max' }),
  z.object({ kind: z.literal('lognormal'), sigma: nonNegative }).strict(),
  z.object({ kind: z.literal('pareto'), shape: positive }).strict(),
  z
    .object({ kind: z.literal('two-class'), fraction: probability, factor: z.number().min(1) })
    .strict(),
]);

export const roundPolicySchema = z.discriminatedUnion('kind', [
  z.object({ kind: z.literal('all') }).strict(),
  z
    .object({
      kind: z.literal('deadline'),
      budgetSeconds: positive,
      stepsMax: positiveInt.max(SCENARIO_LIMITS.localStepsMax).default(1000),
    })
    .strict(),
  z.object({ kind: z.literal('fastest-k'), k: positiveInt }).strict(),
]);

/**
 * One link quantity per client: a value for all, a list (one per client), or a seeded draw
 * (src/timing/links.ts); `value` bounds each value (bandwidths above 0, latencies from 0).
 */
function linkValueSchema(value: z.ZodNumber) {
  return z.union([
    value,
    z.array(value).min(1).max(SCENARIO_LIMITS.clientsMax),
    z
      .object({ kind: z.literal('uniform'), min: value, max: value })
      .strict()
      .refine((u) => u.min <= u.max, { message: 'min must not exceed max' }),
    z.object({ kind: z.literal('lognormal'), median: value, sigma: nonNegative }).strict(),
  ]);
}
export type LinkValueSpec = z.infer<ReturnType<typeof linkValueSchema>>;

export const linkSchema = z
  .object({
    uplinkBytesPerSecond: linkValueSchema(positive).default(1e9),
    downlinkBytesPerSecond: linkValueSchema(positive).default(1e9),
    latencySeconds: linkValueSchema(nonNegative).default(0),
  })
  .strict();

export const timingSchema = z
  .object({
    clock: z.enum(['virtual', 'wall']).default('virtual'),
    /** base cost of one local step; the virtual clock uses it, the wall clock sleeps it */
    stepCostSeconds: positive.default(0.001),
    slowdown: slowdownSchema.default({ kind: 'constant', value: 1 }),
    /** relative per-round jitter of a client's step time (lognormal sigma) */
    jitter: nonNegative.default(0),
    /** transient straggler events: per client and round, with this probability, factor times slower */
    transient: z
      .object({ probability: probability.default(0), factor: z.number().min(1).default(1) })
      .strict()
      .default({ probability: 0, factor: 1 }),
    policy: roundPolicySchema.default({ kind: 'all' }),
    links: linkSchema.default({
      uplinkBytesPerSecond: 1e9,
      downlinkBytesPerSecond: 1e9,
      latencySeconds: 0,
    }),
  })
  .strict();

export const runSchema = z
  .object({
    rounds: positiveInt.max(SCENARIO_LIMITS.roundsMax),
    /** stop once f(x) - f* is at or below this */
    target: nonNegative.default(0),
    /**
     * a held-out accuracy to reach (classifiers with data.testFraction > 0): the summary and
     * compare report the rounds, bytes and seconds to it; it does not stop the run
     */
    targetAccuracy: z.number().gt(0).max(1).optional(),
    /** worker processes for the distributed runtime */
    workers: positiveInt.max(SCENARIO_LIMITS.workersMax).default(2),
    /** evaluate f(x) - f* every this many rounds */
    evalEvery: positiveInt.default(1),
    /**
     * write checkpoint.bin into the results folder after every this many rounds (0: only when
     * the run is interrupted); `roundwire resume` goes on from it
     */
    checkpointEveryRounds: z.number().int().nonnegative().max(1_000_000).default(50),
  })
  .strict();

export const ladderLimits = {
  laddersMax: 8,
  /** fields one zipped ladder moves together */
  fieldsMax: 8,
  rungsMax: 100,
} as const;

const fieldPathPattern = /^[A-Za-z_][A-Za-z0-9_-]*(\.[A-Za-z_][A-Za-z0-9_-]*)*$/;
const fieldPath = z
  .string()
  .refine((text) => fieldPathPattern.test(text), {
    message: 'expected a dotted field path such as method.name',
  })
  .meta({
    description: 'a dotted field path, e.g. method.localSteps',
    pattern: fieldPathPattern.source,
  });

/**
 * A ladder moves one field (`field`) through its rungs, or several fields together (`fields`),
 * rung by rung: then each rung is a list with one value per field. Values are checked when
 * `roundwire compare` applies them, exactly as the same values in the file would be.
 */
export const ladderSchema = z
  .object({
    field: fieldPath.optional(),
    fields: z.array(fieldPath).min(2).max(ladderLimits.fieldsMax).optional(),
    rungs: z.array(z.unknown()).min(1).max(ladderLimits.rungsMax),
  })
  .strict()
  .superRefine((ladder, ctx) => {
    if ((ladder.field === undefined) === (ladder.fields === undefined)) {
      ctx.addIssue({
        code: 'custom',
        path: [],
        message:
          'expected either field (one field) or fields (several fields moved together), not both or neither',
      });
      return;
    }
    const fields = ladder.fields;
    if (fields === undefined) return;
    const twice = fields.find((f, i) => fields.indexOf(f) !== i);
    if (twice !== undefined)
      ctx.addIssue({ code: 'custom', path: ['fields'], message: `${twice} is listed twice` });
    ladder.rungs.forEach((rung, i) => {
      if (!Array.isArray(rung) || rung.length !== fields.length) {
        const given = Array.isArray(rung) ? `a list of ${rung.length}` : 'a single value';
        ctx.addIssue({
          code: 'custom',
          path: ['rungs', i],
          message: `expected a list of ${fields.length} values, one for each of ${fields.join(', ')}; got ${given}`,
        });
      }
    });
  });
export type ScenarioLadder = z.output<typeof ladderSchema>;

export const tuningLimits = {
  /** candidate runs one variant's search may make */
  budgetMax: 64,
  /** points a decade of a log grid */
  pointsPerDecadeMax: 24,
} as const;

/**
 * Tuning for `roundwire compare`: before each variant runs, one numeric field of it is searched
 * over candidate values (a list, or a range searched on the log scale by a grid or by golden
 * section), each candidate run in process; the variant then runs at the best by the figure `by`
 * (its names are listed by src/report/tuning-figures.ts, which checks them).
 */
export const tuningSchema = z
  .object({
    field: fieldPath,
    /** the candidates themselves; or give `range` */
    values: z.array(positive).min(1).max(tuningLimits.budgetMax).optional(),
    /** [low, high], searched on the log scale */
    range: z.tuple([positive, positive]).optional(),
    /** over a range: a log grid, or golden-section search on log(value) */
    search: z.enum(['grid', 'golden']).default('grid'),
    pointsPerDecade: positiveInt.max(tuningLimits.pointsPerDecadeMax).default(4),
    /** candidate runs a variant may make; a grid or list larger than this is refused */
    budget: positiveInt.max(tuningLimits.budgetMax).default(16),
    /** the figure that ranks candidates, e.g. rounds-to-target */
    by: z.string().default('rounds-to-target'),
  })
  .strict()
  .superRefine((tuning, ctx) => {
    if ((tuning.values === undefined) === (tuning.range === undefined)) {
      ctx.addIssue({
        code: 'custom',
        path: [],
        message:
          'expected either values (a list of candidates) or range ([low, high]), not both or neither',
      });
      return;
    }
    if (tuning.range !== undefined && !(tuning.range[0] < tuning.range[1]))
      ctx.addIssue({
        code: 'custom',
        path: ['range'],
        message: `the low end ${tuning.range[0]} must be below the high end ${tuning.range[1]}`,
      });
    if (tuning.values !== undefined && tuning.search === 'golden')
      ctx.addIssue({
        code: 'custom',
        path: ['search'],
        message: 'golden-section search needs a range, not a list of values',
      });
  });
export type ScenarioTuning = z.output<typeof tuningSchema>;

/**
 * A data set's target fixes the problem kind (and a class count), and its natural keys are its
 * own: refused here, field by field, before anything is loaded.
 */
function checkDatasetFits(
  data: z.output<typeof datasetDataSchema>,
  problem: z.output<typeof problemSchema>,
  ctx: z.RefinementCtx,
): void {
  const choice = datasetChoice(data.name);
  const targetNames = Object.keys(choice.targets);
  const targetName = datasetTargetName(data);
  const target = choice.targets[targetName];
  if (target === undefined) {
    ctx.addIssue({
      code: 'custom',
      path: ['data', 'target'],
      message: `data set ${data.name} has the target${targetNames.length > 1 ? 's' : ''} ${targetNames.join(', ')}; got "${targetName}"`,
    });
    return;
  }
  // A perceptron is a multiclass classifier like softmax, with hidden layers in between.
  const kindFits =
    problem.kind === target.kind || (target.kind === 'softmax' && problem.kind === 'perceptron');
  if (!kindFits) {
    ctx.addIssue({
      code: 'custom',
      path: ['problem', 'kind'],
      message: `data set ${data.name}, target ${targetName} (${target.describes}) needs problem.kind "${target.kind}"${target.kind === 'softmax' ? ' or "perceptron"' : ''}, got "${problem.kind}"`,
    });
  } else if (target.classes !== undefined && problem.classes !== target.classes) {
    ctx.addIssue({
      code: 'custom',
      path: ['problem', 'classes'],
      message: `data set ${data.name}, target ${targetName} has ${target.classes} classes; problem.classes is ${problem.classes}`,
    });
  }
  const partition = data.partition;
  if (partition.kind === 'natural' && !choice.naturalKeys.includes(partition.key)) {
    ctx.addIssue({
      code: 'custom',
      path: ['data', 'partition', 'key'],
      message:
        choice.naturalKeys.length === 0
          ? `data set ${data.name} has no key to split by; use the iid, dirichlet or shards partition`
          : `data set ${data.name} splits naturally by ${choice.naturalKeys.join(' or ')}; got "${partition.key}"`,
    });
  }
  if (
    (partition.kind === 'dirichlet' || partition.kind === 'shards') &&
    target.kind === 'least-squares'
  ) {
    ctx.addIssue({
      code: 'custom',
      path: ['data', 'partition', 'kind'],
      message: `"${partition.kind}" splits by class label, but target ${targetName} of data set ${data.name} is a real value; use "iid" or "natural"`,
    });
  }
}

/**
 * What a file scenario's own fields can tell before the file is read: the target, the key and the
 * features are distinct columns, categorical columns are features, and a real-valued target is
 * not split by label. The columns' presence is checked against the file (src/data/data-file-table.ts).
 */
function checkFileColumns(
  data: z.output<typeof fileDataSchema>,
  problem: z.output<typeof problemSchema>,
  ctx: z.RefinementCtx,
): void {
  const key = data.partition.kind === 'natural' ? data.partition.key : null;
  if (Array.isArray(data.features)) {
    data.features.forEach((column, i) => {
      if (column === data.target || column === key)
        ctx.addIssue({
          code: 'custom',
          path: ['data', 'features', i],
          message: `"${column}" is the ${column === data.target ? 'target' : 'key'}; it cannot be a feature too`,
        });
    });
    const features = data.features;
    data.categorical.forEach((column, i) => {
      if (!features.includes(column))
        ctx.addIssue({
          code: 'custom',
          path: ['data', 'categorical', i],
          message: `"${column}" is not one of data.features (${features.join(', ')})`,
        });
    });
  } else {
    const excluded = data.features.allBut;
    data.categorical.forEach((column, i) => {
      if (excluded.includes(column) || column === data.target || column === key)
        ctx.addIssue({
          code: 'custom',
          path: ['data', 'categorical', i],
          message: `"${column}" is not a feature (it is the target, the key or in data.features.allBut)`,
        });
    });
  }
  if (key === data.target)
    ctx.addIssue({
      code: 'custom',
      path: ['data', 'partition', 'key'],
      message: `"${key}" is the target; the key must be another column`,
    });
  const partition = data.partition.kind;
  if (problem.kind === 'least-squares' && (partition === 'dirichlet' || partition === 'shards'))
    ctx.addIssue({
      code: 'custom',
      path: ['data', 'partition', 'kind'],
      message: `"${partition}" splits by class label, but a least-squares target is a real value; use "iid" or "natural"`,
    });
}

export const scenarioSchema = z
  .object({
    name: z.string().min(1).max(200),
    description: z.string().max(10_000).optional(),
    /** every random choice of a run derives from this seed */
    seed: z
      .number()
      .int()
      .min(0)
      .max(2 ** 53 - 1),
    /** the seed of the data (shards, partition, sample counts); absent, the seed above */
    dataSeed: z
      .number()
      .int()
      .min(0)
      .max(2 ** 53 - 1)
      .optional(),
    problem: problemSchema,
    data: dataSchema,
    clients: clientsSchema,
    method: methodSchema,
    compression: compressionSchema.default({
      uplink: {
        default: { kind: 'none', errorFeedback: true, unbiased: false, values: 'f64' },
        fields: {},
      },
      downlink: {
        default: { kind: 'none', errorFeedback: true, unbiased: false, values: 'f64' },
        fields: {},
      },
    }),
    timing: timingSchema.default({
      clock: 'virtual',
      stepCostSeconds: 0.001,
      slowdown: { kind: 'constant', value: 1 },
      jitter: 0,
      transient: { probability: 0, factor: 1 },
      policy: { kind: 'all' },
      links: { uplinkBytesPerSecond: 1e9, downlinkBytesPerSecond: 1e9, latencySeconds: 0 },
    }),
    run: runSchema,
    /**
     * Variants for `roundwire compare`: every combination of one rung from each ladder runs with
     * the same seed; `roundwire run` runs the base scenario and ignores this.
     */
    ladders: z.array(ladderSchema).max(ladderLimits.laddersMax).optional(),
    /** how often `roundwire compare` runs every variant (repeats-schema.ts) */
    repeats: repeatsSchema.optional(),
    /** `roundwire compare` tunes this field per variant first; `roundwire run` ignores it */
    tuning: tuningSchema.optional(),
  })
  .strict()
  .superRefine((scenario, ctx) => {
    // 'auto' is 1/L of f, and a perceptron has no L over all x (src/problem/perceptron.ts).
    if (scenario.problem.kind === 'perceptron' && scenario.method.stepSize === 'auto')
      ctx.addIssue({
        code: 'custom',
        path: ['method', 'stepSize'],
        message:
          'a perceptron has no smoothness constant L, so stepSize "auto" (1/L) has no value; give a number',
      });
    // An accuracy target is read off the test parts' accuracy: it needs both.
    if (scenario.run.targetAccuracy !== undefined) {
      if (scenario.problem.kind === 'least-squares')
        ctx.addIssue({
          code: 'custom',
          path: ['run', 'targetAccuracy'],
          message: 'least squares has no accuracy; run.targetAccuracy belongs to classifiers',
        });
      else if (scenario.data.testFraction === 0)
        ctx.addIssue({
          code: 'custom',
          path: ['run', 'targetAccuracy'],
          message: 'run.targetAccuracy is measured on a test part; set data.testFraction above 0',
        });
    }
    if (scenario.data.source === 'dataset') {
      checkDatasetFits(scenario.data, scenario.problem, ctx);
      return;
    }
    if (scenario.data.source === 'file') {
      checkFileColumns(scenario.data, scenario.problem, ctx);
      return;
    }
    // Softmax learns one weight vector per class: its dimension is a product of two fields.
    // A perceptron's is a sum of products over its layers (its feature count from a data set is
    // checked when the plan is made, memory-estimate.ts).
    const { problem } = scenario;
    const features = scenario.data.features;
    if (problem.kind === 'softmax') {
      const dim = problem.classes * features;
      if (dim > SCENARIO_LIMITS.dimensionMax)
        ctx.addIssue({
          code: 'custom',
          path: ['problem', 'classes'],
          message: `${problem.classes} classes x ${features} features is a model of dimension ${dim}, above the limit of ${SCENARIO_LIMITS.dimensionMax}`,
        });
    }
    if (problem.kind === 'perceptron' && problem.hiddenWidths !== undefined) {
      const widths = [features, ...problem.hiddenWidths, problem.classes];
      let dim = 0;
      for (let l = 0; l + 1 < widths.length; l++) dim += (widths[l] + 1) * widths[l + 1];
      if (dim > SCENARIO_LIMITS.dimensionMax)
        ctx.addIssue({
          code: 'custom',
          path: ['problem', 'hiddenWidths'],
          message: `a perceptron of widths ${widths.join(' -> ')} has ${dim} weights and biases, above the limit of ${SCENARIO_LIMITS.dimensionMax}`,
        });
    }
  });

/** What a user writes (defaults optional). */
export type ScenarioInput = z.input<typeof scenarioSchema>;
/** What everything else sees: complete, validated, defaults filled in. */
export type Scenario = z.output<typeof scenarioSchema>;
