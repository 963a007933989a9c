/**
 * Typed requests: what the parser (./parse.ts) makes of the text of a request (grammar:
 * docs/design.md §2), inferred from their zod schemas (./schema.ts), where each field is
 * described. Every field keeps the character index of its token in the request text (`…At`), so
 * that a later check (e.g. a horizon after an expiry) can still put a caret under the right token.
 */
import type { z } from 'zod';
import type {
  againSchema,
  checkSchema,
  compareSchema,
  exitLevel,
  expirySpec,
  helpSchema,
  historySchema,
  ivSchema,
  legSchema,
  logSchema,
  markSchema,
  termsSchema,
  touchSchema,
} from './schema.js';
import type { Request } from '../verbs/registry.js';

export type ExpirySpec = z.infer<typeof expirySpec>;
export type ExitLevelSpec = z.infer<typeof exitLevel>;
export type LegSpec = z.infer<typeof legSchema>;
export type Terms = z.infer<typeof termsSchema>;
export type TermName = keyof Terms;
export type CheckRequest = z.infer<typeof checkSchema>;
export type CompareRequest = z.infer<typeof compareSchema>;
export type IvRequest = z.infer<typeof ivSchema>;
export type TouchRequest = z.infer<typeof touchSchema>;
export type MarkRequest = z.infer<typeof markSchema>;
export type LogRequest = z.infer<typeof logSchema>;
export type AgainRequest = z.infer<typeof againSchema>;
export type HelpRequest = z.infer<typeof helpSchema>;
export type HistoryRequest = z.infer<typeof historySchema>;

/** Any request: the requests of the verbs in the registry. */
export type { Request };

/** A parse error: message for humans, index of the first bad token, one corrected example. */
export interface ParseError {
  message: string;
  at: number;
  /** length of the bad token (for the caret line) */
  length: number;
  example: string;
}

export type ParseResult = { ok: true; request: Request } | { ok: false; error: ParseError };
