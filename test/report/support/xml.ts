/**
 * Test helper: a small well-formedness check for the SVG/HTML strings the
 * report makes (no XML parser ships with Node). It walks the tags, checks
 * that every element is closed in order, that attribute values are quoted and
 * that text holds no bare '<' or unescaped '&'. `voidElements` lists HTML
 * elements that have no closing tag.
 */
const HTML_VOID = new Set(['meta', 'link', 'br', 'hr', 'img', 'input']);

export function wellFormedProblems(markup: string, options: { html?: boolean } = {}): string[] {
  const problems: string[] = [];
  const stack: string[] = [];
  let i = 0;
  const text = (s: string, at: number) => {
    const bad = s.match(/&(?!(amp|lt|gt|quot|#39|#\d+|#x[0-9a-fA-F]+);)/);
    if (bad && !(options.html && stack.includes('script')) && !stack.includes('style')) problems.push(`bare & at ${at + (bad.index ?? 0)}`);
  };
  while (i < markup.length) {
    const lt = markup.indexOf('<', i);
    if (lt < 0) {
      text(markup.slice(i), i);
      break;
    }
    text(markup.slice(i, lt), i);
    if (stack[stack.length - 1] === 'script' || stack[stack.length - 1] === 'style') {
      const name = stack[stack.length - 1];
      const end = markup.indexOf(`</${name}>`, lt);
      if (end < 0) {
        problems.push(`unclosed <${name}>`);
        break;
      }
      stack.pop();
      i = end + name.length + 3;
      continue;
    }
    if (markup.startsWith('<!--', lt)) {
      i = markup.indexOf('-->', lt) + 3;
      continue;
    }
    if (markup.startsWith('<!', lt)) {
      i = markup.indexOf('>', lt) + 1;
      continue;
    }
    const gt = markup.indexOf('>', lt);
    if (gt < 0) {
      problems.push(`unterminated tag at ${lt}`);
      break;
    }
    const tag = markup.slice(lt + 1, gt);
    if (tag.startsWith('/')) {
      const name = tag.slice(1).trim();
      const open = stack.pop();
      if (open !== name) problems.push(`</${name}> closes <${open ?? 'nothing'}> at ${lt}`);
    } else {
      const m = tag.match(/^([A-Za-z][\w:-]*)((?:\s+[\w:-]+(?:="[^"<]*")?)*)\s*(\/?)$/);
      if (!m) problems.push(`malformed tag <${tag.slice(0, 60)}> at ${lt}`);
      else {
        const name = m[1];
        const selfClosing = m[3] === '/';
        if (!selfClosing && !(options.html && HTML_VOID.has(name))) stack.push(name);
      }
    }
    i = gt + 1;
  }
  if (stack.length > 0) problems.push(`unclosed: ${stack.join(' > ')}`);
  return problems;
}

/** Every match of a numeric attribute in the elements of a kind, e.g. all rx of <ellipse>. */
export function attributeValues(markup: string, element: string, attribute: string): number[] {
  const out: number[] = [];
  for (const m of markup.matchAll(new RegExp(`<${element}\\b[^>]*\\s${attribute}="([^"]*)"`, 'g'))) out.push(Number(m[1]));
  return out;
}
