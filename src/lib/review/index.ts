/** Pure helpers of the review workbench, safe for the browser. */
export * from './words.ts';
export * from './schemas.ts';
export * from './adjust.ts';
export type * from './types.ts';
