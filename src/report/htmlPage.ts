import { escapeHtml } from './format.ts';
import { STYLESHEET } from './style.ts';

export interface PageHead {
  title: string;
  eyebrow: string;
  heading: string;
  /** Already-escaped HTML of the line under the heading. */
  subtitleHtml: string;
}

/**
 * One self-contained page: inline CSS, no script and no external asset, so it opens
 * offline, attaches to an email and prints as it shows. `body` is the sections and footer.
 */
export function htmlPage(head: PageHead, body: string): string {
  return `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>${escapeHtml(head.title)}</title>
<style>${STYLESHEET}</style>
</head>
<body>
<main>
<header class="masthead">
<p class="eyebrow">${escapeHtml(head.eyebrow)}</p>
<h1>${escapeHtml(head.heading)}</h1>
<p class="subtitle">${head.subtitleHtml}</p>
</header>
${body}
</main>
</body>
</html>
`;
}
