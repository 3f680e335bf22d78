/**
 * The restoration engine's pure parts: colour science, the correction and its per-pixel render,
 * and the analysis. Safe to import in the browser; sharp-based I/O lives in ./imaging.
 */
export * from './colour';
export * from './correction';
export * from './analysis';
export * from './errors';
