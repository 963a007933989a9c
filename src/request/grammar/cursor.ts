/** The token cursor every reader moves, and the small tests on tokens the readers share. */
import { looksLikeDate } from '../dates.js';
import type { ExampleKey } from '../examples.js';
import { NUMBER, SPAN, type Tok } from '../lex.js';
import { verbNames } from '../../verbs/registry.js';
import { Reject, after, insertAfter, rejectAt, replaceTok, type Edit } from './errors.js';
import { TERM_WORDS, TYPE_WORDS } from './words.js';

export class Cursor {
  i: number;
  constructor(
    readonly src: string,
    readonly toks: Tok[],
    from: number,
    readonly to: number,
    readonly fallback: ExampleKey,
  ) {
    this.i = from;
  }
  peek(k = 0): Tok | undefined {
    const j = this.i + k;
    return j < this.to ? this.toks[j] : undefined;
  }
  next(): Tok {
    return this.toks[this.i++];
  }
  done(): boolean {
    return this.i >= this.to;
  }
  /** index just past the last token of this range (or of the text) */
  end(): number {
    const last = this.to > 0 ? this.toks[this.to - 1] : undefined;
    return last ? last.at + last.len : 0;
  }
  reject(t: Tok, message: string, fix?: Edit): Reject {
    return rejectAt(t, message, fix, this.fallback);
  }
  /** The next token; when there is none, a rejection after the last token read (`sample` inserted there). */
  needed(message: string, sample: string): Tok {
    const t = this.peek();
    if (!t) throw this.missing(this.toks[this.i - 1], message, sample);
    return t;
  }
  /** A value is missing after `t` (the term word). */
  missing(t: Tok, message: string, sample: string): Reject {
    return new Reject(message, after(t), 1, insertAfter(t, sample), this.fallback);
  }
}

export function isSpecToken(t: Tok): boolean {
  return SPAN.test(t.text) || looksLikeDate(t.text);
}

/** Is the word a keyword of the grammar (so it cannot be a value)? */
export function isKeyword(low: string): boolean {
  return low in TERM_WORDS || low in TYPE_WORDS || (verbNames() as string[]).includes(low) || low === 'price' || low === 'by';
}

/**
 * A number written the way people write money: `1,000`, `$84.20`, `84.20$`. Returns the plain
 * form to suggest, or undefined.
 */
export function plainNumber(t: Tok): string | undefined {
  const m = /^[$€£]?([+-]?\d{1,3}(?:,\d{3})+(?:\.\d+)?|[+-]?\d+(?:\.\d+)?)[$€£]?$/.exec(t.text);
  if (!m || NUMBER.test(t.text)) return undefined;
  return m[1].replace(/,/g, '');
}

export function plainReject(c: Cursor, t: Tok, plain: string): Reject {
  return c.reject(t, `numbers are written plainly, without thousands separators or currency signs: ${plain}`, replaceTok(t, plain));
}

