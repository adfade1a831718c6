/**
 * A tagged template for HTML strings that escapes every interpolated value unless it is
 * already markup (`Html`, from `html` or `raw`). Strings from the input tables (ids, labels,
 * column values) go through it, so they can never become markup.
 */

export class Html {
  constructor(readonly text: string) {}
  toString(): string {
    return this.text;
  }
}

/** Markup that is known to be safe (prerendered figures, output of `html`). */
export function raw(text: string): Html {
  return new Html(text);
}

export function escapeHtml(s: string): string {
  return s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;').replace(/'/g, '&#39;');
}

type Value = Html | string | number | null | undefined | false | Value[];

function render(v: Value): string {
  if (v === null || v === undefined || v === false) return '';
  if (v instanceof Html) return v.text;
  if (Array.isArray(v)) return v.map(render).join('');
  return escapeHtml(String(v));
}

export function html(strings: TemplateStringsArray, ...values: Value[]): Html {
  let out = strings[0];
  for (let i = 0; i < values.length; i++) out += render(values[i]) + strings[i + 1];
  return new Html(out);
}
