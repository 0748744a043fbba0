// Reading a server-rendered page in integration tests.

/**
 * A page's text as a reader gets it: no rendering markers (Svelte's `<!---->`), each tag a space (so table
 * cells and card parts stay apart), white space collapsed.
 */
export const textOf = (html: string): string =>
	html
		.replace(/<!--[\s\S]*?-->/g, '')
		.replace(/<[^>]+>/g, ' ')
		.replace(/\s+/g, ' ');

/** Every link target on the page, with `&amp;` read back. */
export const hrefsOf = (html: string): string[] =>
	[...html.matchAll(/href="([^"]+)"/g)].map((m) => m[1]!.replace(/&amp;/g, '&'));
