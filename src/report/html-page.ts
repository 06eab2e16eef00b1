// One self-contained HTML page: inline CSS, inline SVG, no script, no URL. A Content Security
// Policy forbids every fetch, so a page that someone edits later still cannot reach the network.

import { escapeHtml } from './html-text.js';

/** HTML that has already been escaped or built from escaped parts. */
export interface Html {
  readonly html: string;
}

export function html(text: string): Html {
  return { html: text };
}

export function heading(value: string): Html {
  return html(`<h1>${escapeHtml(value)}</h1>`);
}

export function paragraph(value: string, className?: string): Html {
  return html(`<p${className ? ` class="${escapeHtml(className)}"` : ''}>${escapeHtml(value)}</p>`);
}

export function figure(svg: string, caption: string, title: string): Html {
  return html(
    `<figure><h3>${escapeHtml(title)}</h3>${svg}<figcaption>${escapeHtml(caption)}</figcaption></figure>`,
  );
}

export type TableCell = string | number | null;

/** A table of text cells; numbers are formatted by the caller's `format`. */
export function table(
  header: readonly string[],
  rows: readonly TableCell[][],
  format: (value: number | null) => string,
): Html {
  const cell = (c: TableCell, tag: 'td' | 'th'): string => {
    const numeric = typeof c === 'number' || c === null;
    return `<${tag}${numeric ? ' class="num"' : ''}>${escapeHtml(numeric ? format(c) : c)}</${tag}>`;
  };
  const head = `<tr>${header.map((h) => `<th>${escapeHtml(h)}</th>`).join('')}</tr>`;
  const body = rows
    .map((r) => `<tr>${r.map((c, i) => cell(c, i === 0 ? 'th' : 'td')).join('')}</tr>`)
    .join('\n');
  return html(`<table><thead>${head}</thead><tbody>\n${body}\n</tbody></table>`);
}

export function section(title: string, parts: readonly Html[]): Html {
  return html(
    `<section><h2>${escapeHtml(title)}</h2>\n${parts.map((p) => p.html).join('\n')}\n</section>`,
  );
}

const styles = `
body { font-family: sans-serif; margin: 0; color: #222; background: #fafafa; }
main { max-width: 1400px; margin: 0 auto; padding: 16px 24px 48px; }
h1 { font-size: 1.5em; margin: 0.4em 0; }
h2 { font-size: 1.2em; border-bottom: 1px solid #ddd; padding-bottom: 4px; margin-top: 1.6em; }
h3 { font-size: 1em; margin: 0 0 6px; }
.grid { display: flex; flex-wrap: wrap; gap: 16px; }
figure { margin: 0; padding: 10px; background: white; border: 1px solid #e2e2e2; }
figcaption { font-size: 0.85em; color: #555; max-width: 640px; margin-top: 6px; }
table { border-collapse: collapse; background: white; font-size: 0.9em; }
th, td { border: 1px solid #e2e2e2; padding: 4px 10px; text-align: left; }
td.num { text-align: right; font-variant-numeric: tabular-nums; }
thead th { background: #f0f0f0; }
.note { color: #555; font-size: 0.9em; }
.verdict { font-weight: bold; }
`;

export function page(title: string, parts: readonly Html[]): string {
  return `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta http-equiv="Content-Security-Policy" content="default-src 'none'; style-src 'unsafe-inline'">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>${escapeHtml(title)}</title>
<style>${styles}</style>
</head>
<body>
<main>
${parts.map((p) => p.html).join('\n')}
</main>
</body>
</html>
`;
}

export function grid(parts: readonly Html[]): Html {
  return html(`<div class="grid">${parts.map((p) => p.html).join('\n')}</div>`);
}
