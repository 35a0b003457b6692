/**
 * A tiny HTML builder: a tagged template that escapes every interpolated value unless it
 * is already markup built by this helper. Report data (feature names, category names,
 * summaries) is user-controlled text, so nothing reaches the page without passing here.
 *
 * Written by hand because it is a dozen lines; a template engine would be the only
 * dependency of this unit and would add nothing here.
 */

/** Markup that was built by `html` (or declared trusted with `raw`); not escaped again. */
export class SafeHtml {
  constructor(readonly value: string) {}
  toString(): string {
    return this.value;
  }
}

const ENTITIES: Record<string, string> = { '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' };

/** Escapes text for element content and for quoted attribute values alike. */
export function escapeHtml(text: string): string {
  return text.replace(/[&<>"']/g, (c) => ENTITIES[c]!);
}

export type HtmlPart = SafeHtml | string | number | null | undefined | false | readonly HtmlPart[];

function render(part: HtmlPart): string {
  if (part === null || part === undefined || part === false) return '';
  if (part instanceof SafeHtml) return part.value;
  if (typeof part === 'number') return escapeHtml(String(part));
  if (typeof part === 'string') return escapeHtml(part);
  return part.map(render).join('');
}

/** `html\`<td>${name}</td>\`` escapes `name`; nested `html` results and arrays of them pass through. */
export function html(strings: TemplateStringsArray, ...values: HtmlPart[]): SafeHtml {
  let out = strings[0]!;
  for (let i = 0; i < values.length; i++) out += render(values[i]!) + strings[i + 1]!;
  return new SafeHtml(out);
}

/** Trusted markup written in this unit (style sheet, fixed fragments). Never report data. */
export function raw(markup: string): SafeHtml {
  return new SafeHtml(markup);
}

/** Joins parts with a separator (escaped like any other part). */
export function join(parts: readonly HtmlPart[], separator: HtmlPart = ''): SafeHtml {
  const rendered = parts.map(render);
  return new SafeHtml(rendered.join(render(separator)));
}
