/**
 * Repairs Naive UI markup that fails accessibility checks and has no prop to fix it (naive-ui 2.45):
 * a card header is rendered as two nested `role="heading"` elements without `aria-level`
 * (axe aria-required-attr, critical). The outer one becomes `role="none"` (it also holds the header's
 * extra content and close button) and the inner title gets `aria-level="2"`, below the page's h1.
 * Only added nodes are looked at, so live updates of text cost nothing.
 */
const CARD_HEADER = '.n-card-header[role="heading"]';

function fixCardHeaders(root: Element): void {
  const headers = root.matches(CARD_HEADER) ? [root] : Array.from(root.querySelectorAll(CARD_HEADER));
  for (const h of headers) {
    h.setAttribute('role', 'none');
    const main = h.querySelector(':scope > .n-card-header__main[role="heading"]');
    if (main && !main.hasAttribute('aria-level')) main.setAttribute('aria-level', '2');
  }
}

/** Starts watching the document for Naive UI markup to repair; returns a function that stops it. */
export function installA11yFixes(doc: Document = document): () => void {
  fixCardHeaders(doc.documentElement);
  const observer = new MutationObserver((records) => {
    for (const r of records) for (const n of r.addedNodes) if (n.nodeType === 1) fixCardHeaders(n as Element);
  });
  observer.observe(doc.body, { childList: true, subtree: true });
  return () => observer.disconnect();
}
