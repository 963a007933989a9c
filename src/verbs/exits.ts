/**
 * Targets and stops of a check (`target +400 stop -300`, `target 50% stop 100%`): the levels made
 * money once the position is valued, refused with a caret when they make no sense for it, and the
 * exit figures under the view and the market walk (src/core/models.ts chooses the method).
 *
 * Decisions (DEVELOPERS.md): a percentage is of the position's |cost|; unsigned, a target is a
 * profit and a stop a loss (`stop 300` = −300); a target must lie above the P&L now and a stop
 * below it (else the position would close at once); a stop below the maximum loss at the horizon
 * can never be reached and is refused; targets and stops are for European exercise.
 */
import { exitChances } from '../core/models.js';
import type { ResolvedCheck } from '../request/resolve.js';
import type { ExitLevelSpec, ParseError } from '../request/types.js';
import type { CheckJson, ExitFiguresJson, ExitsJson } from '../result.js';
import { money } from '../report/format.js';
import type { ExitFigures } from '../core/exits.js';

/** A number for a corrected example: the level written the way the user wrote it. */
function written(v: number, spec: ExitLevelSpec, base: number): string {
  if (spec.pct) {
    const p = Math.round((v / base) * 1000) / 10;
    return `${p > 0 ? '+' : ''}${p}%`;
  }
  const r = Math.abs(v) >= 100 ? Math.round(v) : Math.round(v * 100) / 100;
  return `${r > 0 ? '+' : ''}${r}`;
}

function splice(text: string, spec: ExitLevelSpec, by: string): string {
  return text.slice(0, spec.at) + by + text.slice(spec.at + spec.len);
}

/** Drops `target …` / `stop …` from the text (for an example without them). */
function withoutExits(text: string, rc: ResolvedCheck): string {
  const specs = [rc.exits?.target, rc.exits?.stop].filter((s): s is ExitLevelSpec => !!s).sort((a, b) => b.at - a.at);
  let out = text;
  for (const s of specs) {
    const before = out.slice(0, s.at);
    const word = /\s*(target|stop)\s*$/i.exec(before);
    const from = word ? s.at - word[0].length : s.at;
    out = out.slice(0, from) + out.slice(s.at + s.len);
  }
  return out.replace(/\s+/g, ' ').trim();
}

export type ExitLevels = { target: number | null; stop: number | null };

/**
 * The levels in money for a valued check, or the refusal (caret under the level's value, and the
 * user's own request corrected as the example).
 */
export function exitLevels(rc: ResolvedCheck, c: CheckJson, text: string): { ok: true; levels: ExitLevels } | { ok: false; error: ParseError } {
  const ex = rc.exits ?? {};
  const cost = c.position.cost;
  const current = c.position.value - cost;
  const base = Math.abs(cost);
  const scale = c.legs.reduce((s, l) => s + Math.abs(l.qty) * (l.type === 'shares' ? 1 : c.mult), 0) * c.market.spot;
  const tiny = 1e-9 * Math.max(scale, 1);
  const fail = (spec: ExitLevelSpec, message: string, example: string): { ok: false; error: ParseError } => ({
    ok: false,
    error: { message, at: spec.at, length: spec.len, example },
  });
  const first = ex.target ?? ex.stop;
  if (first && c.style === 'american') {
    return fail(
      first,
      'targets and stops are computed for European exercise only: revaluing American legs along every path is not built yet; drop style american or the levels',
      withoutExits(text, rc),
    );
  }
  const money2 = (x: number) => money(x, { sign: true });
  const toMoney = (spec: ExitLevelSpec, sign: 1 | -1): number => {
    const v = spec.signed ? spec.value : sign * Math.abs(spec.value);
    return spec.pct ? v * base : v;
  };
  for (const spec of [ex.target, ex.stop]) {
    if (spec?.pct && !(base > tiny)) {
      return fail(
        spec,
        `a percentage is of the position's cost, and this position costs ${money(cost)}: write the level in money, e.g. ${spec === ex.target ? 'target +400' : 'stop -300'}`,
        splice(text, spec, spec === ex.target ? '+400' : '-300'),
      );
    }
  }
  const target = ex.target ? toMoney(ex.target, 1) : null;
  const stop = ex.stop ? toMoney(ex.stop, -1) : null;
  // a level the check starts beyond closes it at once; the corrected examples go halfway to the
  // maximum gain or loss (a quarter of the cost, or 1% of the scale, where that is unbounded)
  const step = Math.max(0.25 * base, 0.01 * scale, 1);
  const maxGain = c.outcome.maxGain;
  const maxLoss = c.outcome.maxLoss;
  const up = maxGain !== null && maxGain > current ? 0.5 * (maxGain - current) : step;
  const down = maxLoss !== null && maxLoss < current ? 0.5 * (current - maxLoss) : step;
  if (ex.target && target !== null && !(target > current + tiny)) {
    const fix = written(current + up, ex.target, base);
    return fail(
      ex.target,
      `target ${money2(target)} is not above the position's P&L now (${money2(current)}): it would close at once; a target is a profit level above it`,
      splice(text, ex.target, fix),
    );
  }
  if (ex.stop && stop !== null && !(stop < current - tiny)) {
    const fix = written(current - down, ex.stop, base);
    return fail(ex.stop, `stop ${money2(stop)} is not below the position's P&L now (${money2(current)}): it would close at once; a stop is a loss level below it`, splice(text, ex.stop, fix));
  }
  if (ex.stop && stop !== null && maxLoss !== null && stop < maxLoss - tiny) {
    const fix = written(current - down, ex.stop, base);
    return fail(
      ex.stop,
      `stop ${money2(stop)} is below the maximum loss of this position (${money2(maxLoss)}): it can never be reached; drop it or set it between ${money2(maxLoss)} and ${money2(current)}`,
      splice(text, ex.stop, fix),
    );
  }
  return { ok: true, levels: { target, stop } };
}

function figuresJson(f: ExitFigures): ExitFiguresJson {
  return {
    probTarget: f.probTarget,
    probStop: f.probStop,
    probNeither: f.probNeither,
    expectedPnl: f.expectedPnl,
    medianExitYears: f.medianExitYears,
    method: f.method === 'pde' ? 'finite-differences' : 'monte-carlo',
    ...(f.paths !== undefined ? { paths: f.paths } : {}),
    ...(f.stderr ? { stderr: f.stderr } : {}),
  };
}

/** The exit figures of a valued check whose levels passed `exitLevels`. */
export function computeExits(rc: ResolvedCheck, levels: ExitLevels): ExitsJson {
  const input = rc.input;
  const ex = exitChances(input, levels, { drift: input.market.rate, vol: rc.marketVol });
  const w = (s: ExitLevelSpec | undefined) => (s ? { value: s.value, pct: s.pct } : undefined);
  const target = w(rc.exits?.target);
  const stop = w(rc.exits?.stop);
  return {
    target: levels.target,
    stop: levels.stop,
    written: { ...(target ? { target } : {}), ...(stop ? { stop } : {}) },
    currentPnl: ex.current,
    marketVol: rc.marketVol,
    monitoring: 'continuous',
    view: figuresJson(ex.view),
    market: figuresJson(ex.market),
  };
}
