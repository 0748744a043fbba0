// Page sizes the server and the pages share. Fifty rows fill about two screens of a desktop and keep
// each answer small: a page is rendered on the server for every view, and under load its size is most
// of its cost (DEVELOPERS.md, "Benchmarks of pages and uploads").

/** Items in one page of the opened-bids tabulation. */
export const TABULATION_PAGE_ITEMS = 50;

/** Lines of a run's allocation the run page shows at a time. */
export const ALLOCATION_PAGE_LINES = 50;

/** Items allocated differently that the runs' comparison shows at a time, the largest differences first. */
export const COMPARISON_PAGE_ITEMS = 200;
