// Inlined SVG: ids renamed by order of appearance (so output does not depend on Vega's
// process-wide clip counter) and references follow (SVG 1.1, section 5.3.2: url(#id) references).
import { describe, expect, it } from 'vitest';
import { inlineSvg, renderSvg } from '../../src/report/render-svg.js';
import { curveChartSpec } from '../../src/report/chart-specs.js';

describe('inlineSvg', () => {
  it('drops namespace URLs and renames ids and their references', () => {
    const svg =
      '<svg xmlns="http://www.w3.org/2000/svg" xmlns:xlink="http://www.w3.org/1999/xlink"><clipPath id="clip7"></clipPath><g clip-path="url(#clip7)"></g><use href="#clip7"/></svg>';
    expect(inlineSvg(svg, 'a')).toBe(
      '<svg><clipPath id="a-1"></clipPath><g clip-path="url(#a-1)"></g><use href="#a-1"/></svg>',
    );
  });

  it('gives the same text for the same chart rendered twice in one process', async () => {
    const rows = [0, 1, 2].map((round) => ({
      series: 'm',
      round,
      payloadBytes: round * 10,
      seconds: round,
      suboptimality: 10 ** -round,
    }));
    const spec = curveChartSpec(rows, {
      axis: 'round',
      series: [{ label: 'm', colour: '#000000', dash: [1, 0] }],
      yDomain: [0.01, 1],
    });
    const first = await renderSvg(spec, 'c');
    expect(await renderSvg(spec, 'c')).toBe(first);
    expect(first).toContain('clip-path="url(#c-1)"');
  });
});
