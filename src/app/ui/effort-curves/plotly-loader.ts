/** The plotly API, typed without loading it. */
export type PlotlyApi = (typeof import('plotly.js-dist-min'))['default'];

let loading: Promise<PlotlyApi> | null = null;

/**
 * Loads plotly on first use, as a lazy chunk of its own: it is several times the size of the
 * rest of the app and only session pages draw curves. One load serves every chart; a failed
 * load (network) is tried again next time.
 */
export function loadPlotly(): Promise<PlotlyApi> {
  const pending =
    loading ??
    import('plotly.js-dist-min').then(
      (module) => module.default,
      (error: unknown) => {
        loading = null;
        throw error;
      },
    );
  loading = pending;
  return pending;
}

/**
 * Starts loading plotly without waiting for it, for areas whose pages draw curves: the download and
 * the library's start-up then overlap the page's own start and data requests instead of following
 * them. A failed load is left to the first chart, which tries again.
 */
export function preloadPlotly(): void {
  loadPlotly().catch(() => undefined);
}
