// From a file (or text) and tweaks to a complete, validated scenario.

import type { Scenario } from './schema.js';
import { parseScenarioText } from './parse-document.js';
import { applyTweak, parseTweak, type Tweak } from './tweaks.js';
import { validateScenario } from './validate-scenario.js';
import { ScenarioError } from './scenario-error.js';
import { readScenarioText } from './read-scenario-text.js';
import { pinDataFile, withDataPathFrom } from './data-file-pin.js';

/**
 * Reads and parses a scenario file without validating it, so that variants of it can share the
 * reading; a relative data file path is made absolute against the scenario file's folder.
 */
export function readScenarioDocument(file: string): unknown {
  return withDataPathFrom(parseScenarioText(readScenarioText(file), file), file);
}

function isUnder(fieldPath: string, ancestor: string): boolean {
  return (
    fieldPath === ancestor ||
    fieldPath.startsWith(`${ancestor}.`) ||
    fieldPath.startsWith(`${ancestor}[`)
  );
}

/**
 * Applies the tweaks in order and validates the result. When the last tweak to touch the failing
 * field (set it, a mapping around it or a field inside it) came from the command line, the message
 * names that tweak, so that the user knows which option to change.
 */
export function scenarioFromDocument(document: unknown, tweaks: readonly Tweak[] = []): Scenario {
  let tweaked = document;
  for (const t of tweaks) tweaked = applyTweak(tweaked, t);
  try {
    return pinDataFile(validateScenario(tweaked));
  } catch (error) {
    if (!(error instanceof ScenarioError)) throw error;
    const culprit = tweaks
      .filter(
        (t) =>
          isUnder(error.fieldPath, t.path.join('.')) || isUnder(t.path.join('.'), error.fieldPath),
      )
      .at(-1);
    if (culprit?.text === undefined) throw error;
    throw new ScenarioError(
      error.code,
      error.fieldPath,
      `${error.detail} (from --tweak ${JSON.stringify(culprit.text)})`,
    );
  }
}

/** `tweaks` are command-line texts (`field:value`), applied in order. */
export function scenarioFromText(
  text: string,
  sourceName: string,
  tweaks: readonly string[] = [],
): Scenario {
  return scenarioFromDocument(parseScenarioText(text, sourceName), tweaks.map(parseTweak));
}

/** `tweaks` are command-line texts (`field:value`), applied in order. */
export function loadScenarioFile(file: string, tweaks: readonly string[] = []): Scenario {
  return scenarioFromDocument(readScenarioDocument(file), tweaks.map(parseTweak));
}
