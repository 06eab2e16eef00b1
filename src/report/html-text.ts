// Text from files (scenario names, descriptions, variant labels) enters the page only through
// these functions, so a name such as "<script>" stays text.

const replacements: Record<string, string> = {
  '&': '&amp;',
  '<': '&lt;',
  '>': '&gt;',
  '"': '&quot;',
  "'": '&#39;',
};

/** Escapes text for an HTML element's content or a quoted attribute value. */
export function escapeHtml(text: string): string {
  return text.replace(/[&<>"']/g, (c) => replacements[c]);
}
