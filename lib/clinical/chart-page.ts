/** Results a record shows whole at first; older ones load a page at a time ("Show older results"). Client-safe. */
export const CHART_PAGE = 100;
