/**
 * What a recording may hold, checked by every input format before the engine runs. A human lung
 * holds under 10 L and a forced blow peaks under 20 L/s (common practice), so a sample beyond
 * ±100 L (volume) or ±100 L/s (flow) is no breath. Without a bound, numbers near the top of the
 * double range overflow to Infinity and NaN inside the engine, which can then loop for ever.
 */
export const MAX_SAMPLE_MAGNITUDE = 100;

/**
 * Largest magnitude of a sample time (s): room for a Unix time stamp. Beyond about 1e12 s a
 * double no longer keeps the sub-millisecond timing the engine measures (back-extrapolated
 * volume and FEV1 drift), so such times are refused instead of giving wrong numbers.
 */
export const MAX_TIME_MAGNITUDE_S = 1e10;
