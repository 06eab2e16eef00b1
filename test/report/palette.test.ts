// One colour per method everywhere: in report.html, in compare.html and on the Grafana dashboard,
// each method's lines carry the palette's colour (Okabe and Ito, "Color Universal Design", 2008),
// a prediction is dashed and a measurement solid; bytes are coloured by layer, the downlink
// dotted. The pages are built from real in-process runs of every method (four rounds each).
import { afterAll, describe, expect, it } from 'vitest';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { MethodName } from '../../src/algorithm/method.js';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import { runInProcessInto } from '../../src/commands/run-report.js';
import { readRunResults } from '../../src/commands/report-command.js';
import { buildRunReport } from '../../src/report/run-report-page.js';
import { buildComparePage } from '../../src/report/compare-page.js';
import { buildComparison, type VariantOutcome } from '../../src/report/compare-table.js';
import {
  DIRECTION_STYLES,
  LAYER_COLOURS,
  METHOD_COLOURS,
  METHOD_NAMES,
  OKABE_ITO,
  PREDICTED_DASH,
  SOLID_DASH,
} from '../../src/report/palette.js';

const root = mkdtempSync(join(tmpdir(), 'roundwire-palette-'));
afterAll(() => rmSync(root, { recursive: true, force: true }));

interface LineMark {
  /** Vega's description of the line: its first point's fields, "name: value" joined by "; " */
  fields: Map<string, string>;
  stroke: string;
  dash: string;
}

/** The line marks of inline Vega SVG, as Vega's SVG renderer writes them (one path a line). */
function lineMarks(html: string): LineMark[] {
  const marks: LineMark[] = [];
  for (const m of html.matchAll(
    /<path aria-label="([^"]*)" role="graphics-symbol" aria-roledescription="line mark" d="[^"]*" stroke="([^"]*)"[^>]*? stroke-dasharray="([^"]*)"/g,
  )) {
    const fields = new Map(
      m[1]
        .split('; ')
        .map(
          (kv) =>
            [kv.slice(0, kv.indexOf(': ')), kv.slice(kv.indexOf(': ') + 2)] as [string, string],
        ),
    );
    marks.push({ fields, stroke: m[2].toUpperCase(), dash: m[3] });
  }
  return marks;
}

const dashText = (dash: readonly number[]) => dash.join(',');

function runOf(
  method: MethodName,
): VariantOutcome & { summary: NonNullable<VariantOutcome['summary']> } {
  const dir = join(root, method);
  const scenario = scenarioFromText(
    readFileSync('scenarios/quickstart.yaml', 'utf8'),
    'quickstart.yaml',
    [`method.name:${method}`, 'run.rounds:4'],
  );
  runInProcessInto(scenario, dir);
  const results = readRunResults(dir);
  return {
    variant: {
      index: METHOD_NAMES.indexOf(method),
      label: `name:${method}`,
      folderName: method,
      rungs: [METHOD_NAMES.indexOf(method)],
      tweaks: [],
    },
    summary: results.summary,
    rounds: results.rounds,
  };
}

describe('the palette', () => {
  it('gives the seven methods seven different colours of Okabe and Ito', () => {
    const okabeIto = new Set<string>(Object.values(OKABE_ITO));
    expect(METHOD_NAMES).toEqual([
      'gd',
      'fedavg',
      'fedprox',
      'fednova',
      'scaffold',
      'fedlin',
      'fedsplit',
    ]);
    expect(new Set(Object.values(METHOD_COLOURS)).size).toBe(7);
    for (const colour of [...Object.values(METHOD_COLOURS), ...Object.values(LAYER_COLOURS)])
      expect(okabeIto.has(colour), colour).toBe(true);
  });
});

describe('each method in its colour on every page', () => {
  const outcomes = METHOD_NAMES.map(runOf);

  it('report.html: measured solid and predicted dashed, both in the method colour; bytes by layer', async () => {
    for (const outcome of outcomes) {
      const method = outcome.summary.method as MethodName;
      const marks = lineMarks(await buildRunReport(readRunResults(join(root, method))));
      const curves = marks.filter((m) => m.fields.has('series'));
      expect(curves.length, method).toBeGreaterThanOrEqual(3);
      for (const c of curves) {
        expect(c.stroke, method).toBe(METHOD_COLOURS[method]);
        expect(c.dash, `${method} ${c.fields.get('series')}`).toBe(
          dashText(c.fields.get('series')!.startsWith('predicted') ? PREDICTED_DASH : SOLID_DASH),
        );
      }
      expect(
        curves.some((c) => c.dash === dashText(PREDICTED_DASH)),
        method,
      ).toBe(outcome.summary.prediction.available);
      const bytes = marks.filter((m) => m.fields.has('layer'));
      expect(bytes.map((b) => b.fields.get('direction')).sort(), method).toEqual(['down', 'up']);
      for (const b of bytes) {
        expect(b.stroke).toBe(LAYER_COLOURS[b.fields.get('layer') as keyof typeof LAYER_COLOURS]);
        expect(b.dash).toBe(
          dashText(DIRECTION_STYLES[b.fields.get('direction') as 'up' | 'down'].dash),
        );
      }
    }
  });

  it('compare.html: each variant in its method colour', async () => {
    const c = buildComparison(
      'quickstart',
      1e-10,
      [{ fields: ['method.name'], rungs: METHOD_NAMES.map((m) => [m]) }],
      outcomes,
    );
    const marks = lineMarks(await buildComparePage(c, outcomes));
    // three charts (rounds, payload bytes, seconds), one line a variant
    expect(marks).toHaveLength(3 * METHOD_NAMES.length);
    for (const m of marks) {
      const method = m.fields.get('series')!.replace('name:', '') as MethodName;
      expect(m.stroke, method).toBe(METHOD_COLOURS[method]);
      expect(m.dash, method).toBe(dashText(SOLID_DASH));
    }
  });
});

interface Override {
  matcher: { id: string; options: string };
  properties: {
    id: string;
    value: { mode?: string; fixedColor?: string; fill?: string; dash?: number[] };
  }[];
}

interface Panel {
  title: string;
  targets?: { expr: string; legendFormat: string }[];
  fieldConfig?: { overrides: Override[] };
}

const dashboard = JSON.parse(readFileSync('grafana/dashboards/roundwire.json', 'utf8')) as {
  panels: Panel[];
};

/**
 * Grafana's byRegexp field matcher: a pattern that does not start with "/" is anchored at both
 * ends (stringToJsRegex in @grafana/data); later overrides win over earlier ones.
 */
function overridden(
  panel: Panel,
  displayName: string,
  property: string,
): Override['properties'][number]['value'] | undefined {
  let value: Override['properties'][number]['value'] | undefined;
  for (const o of panel.fieldConfig?.overrides ?? []) {
    expect(o.matcher.id).toBe('byRegexp');
    if (!new RegExp(`^${o.matcher.options}$`).test(displayName)) continue;
    for (const p of o.properties) if (p.id === property) value = p.value;
  }
  return value;
}

function legend(format: string, labels: Record<string, string>): string {
  return format.replace(/\{\{(\w+)\}\}/g, (_, name: string) => labels[name] ?? `${name}-value`);
}

describe('the Grafana dashboard', () => {
  const byMethod = dashboard.panels.filter((p) =>
    (p.targets ?? []).some((t) => t.legendFormat.startsWith('{{method}} ')),
  );
  const byLayer = dashboard.panels.filter((p) =>
    (p.targets ?? []).some((t) => t.legendFormat.includes('{{layer}}')),
  );

  it('names the convergence series by method, joined from roundwire_run_info', () => {
    expect(byMethod.map((p) => p.title)).toEqual([
      'f - f* and the predicted rate',
      'Distance to the optimum',
    ]);
    for (const p of byMethod)
      for (const t of p.targets!)
        expect(t.expr).toContain('group_left (method) roundwire_run_info');
  });

  it('colours every method series with the palette colour, predictions dashed, measurements solid', () => {
    for (const p of byMethod) {
      for (const t of p.targets!) {
        for (const method of METHOD_NAMES) {
          const name = legend(t.legendFormat, { method, instance: '127.0.0.1:9464' });
          const colour = overridden(p, name, 'color');
          expect(colour?.mode, name).toBe('fixed');
          expect(colour?.fixedColor?.toUpperCase(), `${p.title}: ${name}`).toBe(
            METHOD_COLOURS[method],
          );
          const style = overridden(p, name, 'custom.lineStyle');
          expect(style?.fill, name).toBe(name.includes(' predicted ') ? 'dash' : undefined);
        }
      }
    }
  });

  it('colours bytes by layer with the palette colour, the downlink dotted', () => {
    expect(byLayer.length).toBe(2);
    for (const p of byLayer) {
      for (const t of p.targets!.filter((x) => x.legendFormat.includes('{{layer}}'))) {
        for (const layer of Object.keys(LAYER_COLOURS) as (keyof typeof LAYER_COLOURS)[]) {
          for (const direction of ['up', 'down']) {
            const name = legend(t.legendFormat, { layer, direction });
            expect(
              overridden(p, name, 'color')?.fixedColor?.toUpperCase(),
              `${p.title}: ${name}`,
            ).toBe(LAYER_COLOURS[layer]);
            expect(overridden(p, name, 'custom.lineStyle')?.fill, name).toBe(
              direction === 'down' ? 'dot' : undefined,
            );
          }
        }
      }
    }
  });
});
