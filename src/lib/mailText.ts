/** Splits captured plain-text mail into text and link parts, to be rendered as text nodes (never as HTML). */

export interface MailPart {
  text: string;
  /** Set for a link this app may open: same-origin paths of our own or an http(s) URL. */
  href?: string;
}

// A URL runs until whitespace or a character that is not part of a link in plain-text mail.
const URL_RE = /https?:\/\/[^\s<>"'`]+/g;
// Punctuation that usually ends a sentence rather than a URL.
const TRAILING = /[.,;:!?)\]]+$/;

/** Only http(s) links become anchors; anything else (javascript:, data:) stays plain text. */
export function safeHref(raw: string): string | null {
  let url: URL;
  try {
    url = new URL(raw);
  } catch {
    return null;
  }
  return url.protocol === 'http:' || url.protocol === 'https:' ? url.href : null;
}

/** The parts of a mail body in order; joined, their texts give back the body unchanged. */
export function mailParts(text: string): MailPart[] {
  const out: MailPart[] = [];
  let last = 0;
  for (const m of text.matchAll(URL_RE)) {
    const start = m.index ?? 0;
    const url = m[0].replace(TRAILING, '');
    if (url.length === 0) continue;
    if (start > last) out.push({ text: text.slice(last, start) });
    const href = safeHref(url);
    out.push(href ? { text: url, href } : { text: url });
    last = start + url.length;
  }
  if (last < text.length) out.push({ text: text.slice(last) });
  return out;
}

/** Recipients for display. */
export function recipientsText(to: readonly string[]): string {
  return to.length === 0 ? '(no recipient)' : to.join(', ');
}
