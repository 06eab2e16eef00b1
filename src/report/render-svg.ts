// Vega-Lite to SVG text in Node, with no browser and no canvas: Vega's headless view renders
// the scenegraph to an SVG string. The result is made safe to inline several times in one page.

import type { TopLevelSpec } from 'vega-lite';

/**
 * Prepares a standalone SVG for inlining in HTML: the namespace declarations go (the HTML parser
 * puts <svg> in the SVG namespace itself, and the page then holds no URL at all), and element
 * ids are renamed <prefix>-1, <prefix>-2, ... in order of appearance. Vega numbers clip paths
 * from a process-wide counter, so its own ids would differ between two renderings of the same
 * chart and could collide between two charts of one page.
 */
export function inlineSvg(svg: string, idPrefix: string): string {
  const renamed = new Map<string, string>();
  for (const match of svg.matchAll(/\sid="([^"]+)"/g))
    if (!renamed.has(match[1])) renamed.set(match[1], `${idPrefix}-${renamed.size + 1}`);
  const rename = (id: string): string => renamed.get(id) ?? id;
  return svg
    .replace(/\s+xmlns(:xlink)?="[^"]*"/g, '')
    .replace(/\sid="([^"]+)"/g, (_, id: string) => ` id="${rename(id)}"`)
    .replace(/url\(#([^)]+)\)/g, (_, id: string) => `url(#${rename(id)})`)
    .replace(/href="#([^"]+)"/g, (_, id: string) => `href="#${rename(id)}"`);
}

/** Renders a Vega-Lite spec to SVG text; the same spec gives the same text. */
export async function renderSvg(spec: TopLevelSpec, idPrefix: string): Promise<string> {
  // Loaded on first use: the two packages take about 0.5 s to import, which every coordinator and
  // worker process would otherwise pay at start although only a report renders charts.
  const [vega, { compile }] = await Promise.all([import('vega'), import('vega-lite')]);
  const view = new vega.View(vega.parse(compile(spec).spec), {
    renderer: 'none',
    logLevel: vega.Error,
  });
  try {
    return inlineSvg(await view.toSVG(), idPrefix);
  } finally {
    view.finalize();
  }
}
