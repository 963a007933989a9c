/** Help topics (filled in below). */
export const HELP_TOPICS = [
  'check',
  'compare',
  'iv',
  'touch',
  'mark',
  'log',
  'again',
  'jumps',
  'american',
  'units',
] as const;

export type HelpTopic = (typeof HELP_TOPICS)[number];

export function helpText(topic?: string): string {
  return topic ?? '';
}
