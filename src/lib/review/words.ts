/**
 * The review workbench's plain words for states, decisions, grades and shortcuts, shared by the
 * pages, the islands and the API. Kept free of db/ imports so islands can use it; the Item model
 * takes its value lists from here.
 */

import { ITEM_STATE_LABELS, ITEM_STATES, type ItemState } from '../batches/schemas.ts';

export { ITEM_STATES, type ItemState };
export const DECISIONS = ['accepted', 'accepted_adjusted', 'rescan', 'skipped'] as const;
export type Decision = (typeof DECISIONS)[number];
export const NEGATIVE_AVAILABILITY = ['yes', 'no', 'unknown'] as const;
export type NegativeAvailability = (typeof NEGATIVE_AVAILABILITY)[number];
export const FADE_GRADES = ['none', 'slight', 'moderate', 'severe'] as const;
export type FadeGradeName = (typeof FADE_GRADES)[number];

export const STATE_WORDS: Record<ItemState, string> = ITEM_STATE_LABELS;

export const DECISION_WORDS: Record<Decision | 'undecided', string> = {
  accepted: 'Accepted',
  accepted_adjusted: 'Accepted with changes',
  rescan: 'Set aside for rescan',
  skipped: 'Left for later',
  undecided: 'Not reviewed yet',
};

export const GRADE_WORDS: Record<FadeGradeName, string> = {
  none: 'Not faded',
  slight: 'Slight',
  moderate: 'Moderate',
  severe: 'Severe',
};

export const NEGATIVE_WORDS: Record<NegativeAvailability, string> = {
  yes: 'Yes, we have it',
  no: 'No',
  unknown: 'Not sure',
};

/** The three dye layers and the scan channel each one governs (chromogenic prints: cyan, magenta and yellow dyes govern red, green and blue). */
export const DYE_LAYERS = [
  { dye: 'cyan', channel: 'red', label: 'Cyan layer' },
  { dye: 'magenta', channel: 'green', label: 'Magenta layer' },
  { dye: 'yellow', channel: 'blue', label: 'Yellow layer' },
] as const;
export type DyeName = (typeof DYE_LAYERS)[number]['dye'];

/** Where a negative may be kept; free text is allowed too, these are suggestions. */
export const NEGATIVE_PLACES = ['sleeve', 'envelope', 'box'] as const;

/** Keyboard shortcuts of the print review view: plain keys, listed in the help overlay. */
export const SHORTCUTS = [
  { key: 'a', label: 'A', action: 'accept', words: 'Accept the print as proposed' },
  { key: 'd', label: 'D', action: 'acceptAdjusted', words: 'Accept with my changes' },
  { key: 'r', label: 'R', action: 'rescan', words: 'Set aside for a rescan from the negative' },
  { key: 'l', label: 'L', action: 'skip', words: 'Leave for later' },
  { key: 'ArrowRight', label: '→', action: 'next', words: 'Next print' },
  { key: 'ArrowLeft', label: '←', action: 'previous', words: 'Previous print' },
  { key: ' ', label: 'Space (hold)', action: 'holdOriginal', words: 'Show the whole original while held' },
  { key: 'v', label: 'V', action: 'toggleLayout', words: 'One frame with a split, or side by side' },
  { key: 'w', label: 'W', action: 'pickWhite', words: 'Pick a white point on the original' },
  { key: '[', label: '[', action: 'strengthDown', words: 'Less correction' },
  { key: ']', label: ']', action: 'strengthUp', words: 'More correction' },
  { key: 'u', label: 'U', action: 'reset', words: 'Back to the proposed correction' },
  { key: 's', label: 'S', action: 'save', words: 'Save my changes as a new version' },
  { key: '0', label: '0', action: 'fit', words: 'Fit the print in the frame' },
  { key: '1', label: '1', action: 'actualSize', words: 'Full size (one scan pixel per screen pixel)' },
  { key: '?', label: '?', action: 'help', words: 'Show or hide this list' },
  { key: 'Escape', label: 'Esc', action: 'close', words: 'Close a form or stop picking' },
] as const;
export type ShortcutAction = (typeof SHORTCUTS)[number]['action'];
