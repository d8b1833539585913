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
