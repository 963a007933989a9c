/**
 * `again N [changes]`: rewrite a logged request's text with the changes, so the rerun is an
 * ordinary request the reply can quote (and the log can store) in full.
 *
 * Rules: terms in the changes replace the same terms of the logged request (or are added); legs
 * in the changes replace all the logged legs. For a comparison the changes apply to the first part,
 * and replace a term in any later part that states it itself (so `again 17 spot 102` means spot
 * 102 in every part). iv and touch requests take term changes only.
 *
 * The rewritten text is parsed again and checked to mean exactly the logged request merged with
 * the changes; the layout keeps a position-wide `iv` from being read as the last leg's own.
 */

import { exampleOf } from './examples.js';
import { verbNamed, verbs } from '../verbs/registry.js';
import { mergeCheck, parse, parseCheckPart, type CheckPart } from './parse.js';
import type { AgainRequest, CheckRequest, ParseError, Request } from './types.js';
import type { Tok } from './lex.js';

export type AgainResult = { ok: true; text: string } | { ok: false; error: ParseError };

type Range = [number, number];

function slice(text: string, toks: Tok[], [from, to]: Range): string {
  return text.slice(toks[from].at, toks[to - 1].at + toks[to - 1].len);
}

interface Piece {
  name: string;
  text: string;
}

function termPieces(text: string, part: CheckPart): Piece[] {
  return (Object.entries(part.termToks) as [string, Range][])
    .sort((a, b) => a[1][0] - b[1][0])
    .map(([name, r]) => ({ name, text: slice(text, part.toks, r) }));
}

function legPieces(text: string, part: CheckPart): string[] {
  return part.legToks.map((r) => slice(text, part.toks, r));
}

/**
 * Lay out legs then terms. A position-wide `iv` right after an option leg would be read as that
 * leg's own, so it is never placed first after the legs; if it is the only term, a neutral
 * `style european` (the default, and no style was written) goes before it.
 */
function layout(legs: string[], terms: Piece[], lastLegIsShares: boolean): string {
  let ordered = terms;
  if (legs.length && !lastLegIsShares && terms.length && terms[0].name === 'iv') {
    ordered = [...terms.slice(1), terms[0]];
    if (ordered[0].name === 'iv') ordered = [{ name: 'style', text: 'style european' }, ...ordered];
  }
  return [...legs, ...ordered.map((p) => p.text)].join(' ');
}

/** Merge term pieces: `over` replaces pieces of the same name, the rest of `over` is appended (if `add`). */
function mergePieces(base: Piece[], over: Piece[], add: boolean): Piece[] {
  const byName = new Map(over.map((p) => [p.name, p]));
  const out = base.map((p) => byName.get(p.name) ?? p);
  if (add) for (const p of over) if (!base.some((b) => b.name === p.name)) out.push(p);
  return out;
}

function sameCheck(a: CheckRequest, b: CheckRequest): boolean {
  // style european is the default: written or not, it means the same
  const strip = (c: CheckRequest) => {
    const { style, ...rest } = c.terms;
    const terms = style === 'european' ? rest : c.terms;
    // an exit level keeps where its value was written: not part of its meaning
    const meaning = ([k, v]: [string, unknown]): [string, unknown] =>
      (k === 'target' || k === 'stop') && v && typeof v === 'object' ? [k, { ...(v as object), at: 0, len: 0 }] : [k, v];
    const sorted = Object.fromEntries(Object.entries(terms).map(meaning).sort(([x], [y]) => x.localeCompare(y)));
    return JSON.stringify({ legs: c.legs.map(({ at: _a, termsAt: _t, ...l }) => l), terms: sorted });
  };
  return strip(a) === strip(b);
}

function lastIsShares(part: CheckPart, overLegs: boolean, over: CheckPart): boolean {
  const legs = overLegs ? over.check.legs : part.check.legs;
  return legs.length > 0 && legs[legs.length - 1].kind === 'shares';
}

function fail(message: string, at: number, length = 1, example: string = exampleOf('again')): AgainResult {
  return { ok: false, error: { message, at, length, example } };
}

/** Body of a check request's text without the optional leading `check`. */
function checkBody(text: string): string {
  return text.replace(/^\s*check(?=\s|$)/i, '').trim();
}

/** Rewrite one check's text with the changes; `addTerms` false keeps only terms already written. */
function rewriteCheck(body: string, over: CheckPart, overText: string, addTerms: boolean, useLegs: boolean): { text: string; part: CheckPart } | ParseError {
  const p = parseCheckPart(body, 'check');
  if (!p.ok) return p.error;
  const base = p.part;
  const overLegs = useLegs && over.check.legs.length > 0;
  const legs = overLegs ? legPieces(overText, over) : legPieces(body, base);
  const terms = mergePieces(termPieces(body, base), termPieces(overText, over), addTerms);
  return { text: layout(legs, terms, lastIsShares(base, overLegs, over)), part: base };
}

/**
 * The logged request's text rewritten with `again`'s changes. `stored` is the text of the logged
 * request; `againText` the text of the again request (for error positions).
 */
export function applyAgain(stored: string, again: AgainRequest, againText?: string): AgainResult {
  try {
    const logged = parse(stored);
    if (!logged.ok) return fail(`check ${again.number} in the log no longer reads: ${logged.error.message}`, 0);
    if (!again.rest.trim()) return { ok: true, text: stored.trim() };
    const req: Request = logged.request;
    const verb = req.verb;
    // how the verb's request is rewritten (its `rerun` in src/verbs/<verb>.ts); a comparison's changes read as a check's
    const shape = verbNamed(verb).rerun;
    if (!shape) {
      const names = verbs().filter((v) => v.rerun).map((v) => v.name);
      return fail(`again reruns ${names.slice(0, -1).join(', ')} and ${names[names.length - 1]} requests; entry ${again.number} is a ${verb} request`, 0, 5);
    }
    const overVerb = shape === 'parts' ? 'check' : verb;
    const over = parseCheckPart(again.rest, overVerb);
    if (!over.ok) {
      const e = over.error;
      const fixed = e.example !== exampleOf(overVerb) ? `again ${again.number} ${e.example}` : exampleOf('again');
      return { ok: false, error: { ...e, at: e.at + again.restAt, example: fixed } };
    }
    const o = over.part;

    let text: string;
    let want: CheckRequest[] | null = null;
    if (shape === 'legs' && req.verb === 'check') {
      const r = rewriteCheck(checkBody(stored), o, again.rest, true, true);
      if ('message' in r) return fail(`check ${again.number} in the log no longer reads: ${r.message}`, 0);
      text = r.text;
      want = [mergeCheck(req, o.check)];
    } else if (shape === 'parts' && req.verb === 'compare') {
      const parts: string[] = [];
      const intended: CheckRequest[] = [];
      req.parts.forEach((part, k) => {
        const body = checkBody(part.text);
        const r = rewriteCheck(body, o, again.rest, k === 0, k === 0);
        if ('message' in r) throw new Error(r.message);
        parts.push(r.text);
        // intended: part k as written, with the changes applied where the rule says
        const own = r.part.check;
        const changed: CheckRequest = { ...own, terms: { ...own.terms }, legs: own.legs };
        if (k === 0) {
          intended.push(mergeCheck(own, o.check));
        } else {
          for (const key of Object.keys(o.check.terms) as (keyof CheckRequest['terms'])[]) {
            if (own.terms[key] !== undefined) (changed.terms as Record<string, unknown>)[key] = o.check.terms[key];
          }
          intended.push(mergeCheck(intended[k - 1], changed));
        }
      });
      text = `compare ${parts.join(' ; ')}`;
      want = intended;
    } else {
      // keep the head (iv call 105 2027-03-19 / touch 120: `rerun.head` words), then the terms
      if (typeof shape !== 'object') throw new Error(`a ${verb} request is not rewritten as its rerun shape says`);
      const headLen = shape.head;
      const toks = stored.trim().split(/\s+/);
      // the head tokens never contain '@', ';' or spaces, so a whitespace split finds them
      const head = toks.slice(0, headLen).join(' ');
      const bodyText = stored.trim().slice(stored.trim().indexOf(toks[headLen - 1]) + toks[headLen - 1].length).trim();
      const b = parseCheckPart(bodyText, verb);
      if (!b.ok) return fail(`entry ${again.number} in the log no longer reads: ${b.error.message}`, 0);
      const terms = mergePieces(termPieces(bodyText, b.part), termPieces(again.rest, o), true);
      text = [head, ...terms.map((p) => p.text)].join(' ');
    }

    // the rewritten text must read, and mean what the rules say
    const back = parse(text);
    if (!back.ok) {
      return fail(`again ${again.number} with these changes does not read: ${back.error.message}`, again.restAt, Math.max(1, again.rest.length));
    }
    if (want) {
      const got: CheckRequest[] =
        back.request.verb === 'check' ? [back.request] : back.request.verb === 'compare' ? (back.request.checks ?? []) : [];
      if (got.length !== want.length || !got.every((g, i) => sameCheck(g, want![i]))) {
        return fail(`Kolmo could not rewrite entry ${again.number} with these changes; write the request out in full`, again.restAt, Math.max(1, again.rest.length));
      }
    }
    return { ok: true, text };
  } catch (e) {
    return fail(
      `Kolmo could not rewrite entry ${again.number} (${e instanceof Error ? e.message : String(e)}); write the request out in full`,
      again.restAt,
      Math.max(1, againText ? againText.length - again.restAt : 1),
    );
  }
}
