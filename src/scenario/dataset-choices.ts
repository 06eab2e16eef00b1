// What a scenario may choose of the data sets that installed packages ship: their names, the
// targets each can learn (and the problem kind each target needs), the keys a natural split can
// group by, and whether features are standardized by default. Only facts a scenario is checked
// against live here; the loaders (src/data/*-dataset.ts) read the data and assert these facts.

export type DatasetProblemKind = 'least-squares' | 'logistic' | 'softmax';

export interface DatasetTargetChoice {
  kind: DatasetProblemKind;
  /** softmax: the number of classes */
  classes?: number;
  /** what is learned, for messages and the README */
  describes: string;
}

export interface DatasetChoice {
  /** the first target is the one used when a scenario names none */
  targets: Record<string, DatasetTargetChoice>;
  /** columns whose values become clients in a natural split */
  naturalKeys: readonly string[];
  /**
   * Standardize features when the scenario does not say. Digits are pixels already on one
   * [0, 1] scale; standardizing would blow a rarely inked border pixel up to about 100 and the
   * curvature (and so 1/L, the automatic step) down with it.
   */
  standardizeByDefault: boolean;
}

export const DATASET_CHOICES = {
  iris: {
    targets: { species: { kind: 'softmax', classes: 3, describes: 'iris species' } },
    naturalKeys: [],
    standardizeByDefault: true,
  },
  digits: {
    targets: { digit: { kind: 'softmax', classes: 10, describes: 'the digit 0 to 9' } },
    naturalKeys: [],
    standardizeByDefault: false,
  },
  flights: {
    targets: {
      'delay-minutes': { kind: 'least-squares', describes: 'delay in minutes' },
      'delayed-over-15-minutes': {
        kind: 'logistic',
        describes: 'whether the delay is over 15 minutes',
      },
    },
    naturalKeys: ['origin', 'destination'],
    standardizeByDefault: true,
  },
  gapminder: {
    targets: {
      'life-expectancy-years': { kind: 'least-squares', describes: 'life expectancy in years' },
    },
    naturalKeys: ['country', 'region'],
    standardizeByDefault: true,
  },
  penguins: {
    targets: { species: { kind: 'softmax', classes: 3, describes: 'penguin species' } },
    naturalKeys: ['island'],
    standardizeByDefault: true,
  },
  cars: {
    targets: {
      'miles-per-gallon': { kind: 'least-squares', describes: 'fuel economy in miles per gallon' },
    },
    naturalKeys: ['origin'],
    standardizeByDefault: true,
  },
} as const satisfies Record<string, DatasetChoice>;

export type DatasetName = keyof typeof DATASET_CHOICES;

export const DATASET_NAMES = Object.keys(DATASET_CHOICES) as [DatasetName, ...DatasetName[]];

/** Every target name of every data set, for the schema's enum; which fits which is checked apart. */
export const DATASET_TARGET_NAMES = [
  ...new Set(DATASET_NAMES.flatMap((name) => Object.keys(DATASET_CHOICES[name].targets))),
] as [string, ...string[]];

export function datasetChoice(name: DatasetName): DatasetChoice {
  return DATASET_CHOICES[name];
}

/** The target a data scenario learns: the named one, or the data set's first. */
export function datasetTargetName(data: { name: DatasetName; target?: string }): string {
  return data.target ?? Object.keys(datasetChoice(data.name).targets)[0];
}

/** Whether a data scenario's features are standardized: as it says, or the data set's default. */
export function datasetStandardizes(data: { name: DatasetName; standardize?: boolean }): boolean {
  return data.standardize ?? datasetChoice(data.name).standardizeByDefault;
}
