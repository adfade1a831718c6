/**
 * The release description: Markdown rendered with raw HTML disabled, links limited to
 * http(s), mailto and relative targets, and no external images (an image is kept only
 * when its source is a relative path inside the site; otherwise its alt text is shown).
 */
import MarkdownIt from 'markdown-it';

const md = new MarkdownIt({ html: false, linkify: false, typographer: false });

const defaultImage = md.renderer.rules.image!;
md.renderer.rules.image = (tokens, idx, options, env, self) => {
  const token = tokens[idx];
  const src = token.attrGet('src') ?? '';
  if (/^[a-z][a-z0-9+.-]*:/i.test(src) || src.startsWith('//') || src.startsWith('/')) {
    return md.utils.escapeHtml(token.content || '[image]');
  }
  return defaultImage(tokens, idx, options, env, self);
};

export function renderMarkdown(text: string): string {
  return md.render(text);
}
