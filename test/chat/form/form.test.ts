/**
 * The check form's pure parts: values → request text through the real parser (round trip), a
 * rejection of the composed text → the field that wrote the bad token, a logged request → the
 * form's values, and the modal itself (its inputs read back to the same values).
 */
import { describe, expect, it } from 'vitest';
import { composeRequest, legField, type FormValues } from '../../../src/chat/form/compose.js';
import { fieldOf, formErrorsOf, reasonOf } from '../../../src/chat/form/errors.js';
import { prefillFromRequest } from '../../../src/chat/form/prefill.js';
import { checkFormView, decodeMeta, encodeMeta, fieldsShown, readForm, MODAL_BLOCKS_MAX, type StateValues } from '../../../src/chat/form/view.js';
import { parse } from '../../../src/request/parse.js';
import { exampleOf } from '../../../src/request/examples.js';
import type { CheckRequest } from '../../../src/request/types.js';
import { ask as askSeam } from '../../../src/verbs/ask.js';
import type { Reply } from '../../../src/reply.js';

const NOW = new Date('2027-01-04T12:00:00Z');
const ask = (text: string): Promise<Reply> => askSeam(text, { channel: 'CFORMTEST1', user: 'UFORM00001', store: null, now: NOW });

/** a bull call spread on an invented freight company, filled in as a person would */
const SPREAD: FormValues = {
  legs: [
    { qty: '2', type: 'call', strike: '105', expiry: '2027-03-19', entry: '3.10', iv: '28' },
    { qty: '-2', type: 'call', strike: '115', expiry: '2027-03-19', entry: '1.05', iv: '25' },
  ],
  spot: '100',
  rate: '4.5',
  yield: '1',
  drift: '9',
  vol: '26',
  horizon: '2027-02-15',
  asof: '2027-01-04',
};

function checkOf(text: string): CheckRequest {
  const p = parse(text);
  if (!p.ok) throw new Error(`did not parse: ${text}: ${p.error.message}`);
  if (p.request.verb !== 'check') throw new Error(`not a check: ${text}`);
  return p.request;
}

describe('form → request text', () => {
  it('a two-leg spread composes into the grammar and parses back to the same legs and terms', async () => {
    const c = composeRequest(SPREAD);
    expect(c.ok).toBe(true);
    if (!c.ok) return;
    expect(c.text).toBe('+2 call 105 2027-03-19 @3.1 iv 28% -2 call 115 2027-03-19 @1.05 iv 25% spot 100 rate 4.5% yield 1% asof 2027-01-04 horizon 2027-02-15 drift 9% vol 26%');
    const r = checkOf(c.text);
    expect(r.legs.map((l) => [l.qty, l.kind, l.strike, l.expiry, l.entry, l.iv])).toEqual([
      [2, 'call', 105, { date: '2027-03-19' }, 3.1, 0.28],
      [-2, 'call', 115, { date: '2027-03-19' }, 1.05, 0.25],
    ]);
    expect(r.terms).toMatchObject({ spot: 100, rate: 0.045, yield: 0.01, drift: 0.09, vol: 0.26, horizon: { date: '2027-02-15' }, asof: '2027-01-04' });
  });

  it('the composed text means the same as the design notes’ own example (docs/design.md §2) and prices the same', async () => {
    const c = composeRequest(SPREAD);
    if (!c.ok) throw new Error('compose failed');
    const typed = await ask('+2 call 105 2027-03-19 @3.10 iv 28% -2 call 115 2027-03-19 @1.05 iv 25% spot 100 rate 4.5% yield 1% drift 9% vol 26% horizon 2027-02-15 asof 2027-01-04');
    const formed = await ask(c.text);
    expect(formed.kind).toBe('answer');
    expect(typed.kind).toBe('answer');
    if (formed.kind !== 'answer' || typed.kind !== 'answer') return;
    expect(formed.json.outcome).toEqual(typed.json.outcome);
    expect(formed.json.position).toEqual(typed.json.position);
  });

  it('a position-wide iv is never read as the last leg’s own', async () => {
    const c = composeRequest({ legs: [{ qty: '1', type: 'put', strike: '95', expiry: '2027-03-19' }], iv: '30', spot: '100' });
    if (!c.ok) throw new Error('compose failed');
    const r = checkOf(c.text);
    expect(r.legs[0].iv).toBeUndefined();
    expect(r.terms.iv).toBe(0.3);
    // with no other term before it, the neutral default style goes first
    const only = composeRequest({ legs: [{ qty: '1', type: 'put', strike: '95', expiry: '2027-03-19' }], iv: '30' });
    if (!only.ok) throw new Error('compose failed');
    expect(only.text).toBe('+1 put 95 2027-03-19 style european iv 30%');
    const r2 = checkOf(only.text);
    expect(r2.legs[0].iv).toBeUndefined();
    expect(r2.terms.iv).toBe(0.3);
  });

  it('shares, a mark, american style, a multiplier and jumps all reach the request', async () => {
    const c = composeRequest({
      symbol: 'fernwk',
      legs: [{ qty: '100', type: 'shares', entry: '84.20' }, { qty: '-1', type: 'call', strike: '90', expiry: '2027-04-16', iv: '30' }],
      style: 'american',
      mult: '10',
      jumpRate: '0.5',
      jumpMean: '-8',
      jumpSd: '12',
      horizon: '2027-03-01',
    });
    if (!c.ok) throw new Error(JSON.stringify(c.errors));
    const r = checkOf(c.text);
    expect(r.legs.map((l) => l.kind)).toEqual(['shares', 'call']);
    expect(r.legs[0].entry).toBe(84.2);
    expect(r.terms).toMatchObject({ on: 'FERNWK', style: 'american', mult: 10, jumps: { intensity: 0.5, mean: -0.08, sd: 0.12 } });
  });

  it('the drift’s uncertainty is written as the grammar has it (drift 9% ± 6%)', async () => {
    const c = composeRequest({ ...SPREAD, driftSe: '6' });
    if (!c.ok) throw new Error('compose failed');
    expect(c.text).toContain('drift 9% ± 6%');
    const span = c.spans.find((s) => s.field === 'drift_se')!;
    expect(c.text.slice(span.from, span.to)).toBe('± 6%');
  });

  it('the form’s own checks: a leg needs a quantity and a strike, jumps all three, at least one leg, numbers only', async () => {
    const a = composeRequest({ legs: [{ qty: '1', strike: '100' }, { strike: '110', expiry: '2027-03-19' }], spot: '100' });
    expect(a.ok).toBe(false);
    if (!a.ok) expect(Object.keys(a.errors)).toEqual([legField(1, 'qty')]);
    const b = composeRequest({ legs: [{ qty: '1', type: 'put' }], spot: '100' });
    expect(b.ok || Object.keys(b.errors)).toEqual([legField(0, 'strike')]);
    const j = composeRequest({ ...SPREAD, jumpRate: '0.5' });
    expect(j.ok || Object.keys(j.errors).sort()).toEqual(['jump_mean', 'jump_sd']);
    const none = composeRequest({ legs: [{}, {}], spot: '100' });
    expect(none.ok || Object.keys(none.errors)).toEqual([legField(0, 'qty')]);
    // a value is one number: words that would read as more terms are refused on their field
    const sneaky = composeRequest({ ...SPREAD, spot: '100 drift 80%' });
    expect(sneaky.ok || sneaky.errors).toEqual({ spot: 'A plain number here, e.g. 100.' });
    const date = composeRequest({ ...SPREAD, horizon: '2027-02-15 vol 90%' });
    expect(date.ok || Object.keys(date.errors)).toEqual(['horizon']);
  });
});

describe('form → request text: target and stop (issue 15)', () => {
  it('money and percent levels compose into the grammar and read back through the parser', () => {
    const c = composeRequest({ ...SPREAD, target: '+400', stop: '-300' });
    if (!c.ok) throw new Error('compose failed');
    expect(c.text.endsWith('vol 26% target +400 stop -300')).toBe(true);
    expect(checkOf(c.text).terms).toMatchObject({ target: { value: 400, pct: false, signed: true }, stop: { value: -300, pct: false, signed: true } });
    const p = composeRequest({ ...SPREAD, target: ' 50 % ', stop: '100%' });
    if (!p.ok) throw new Error('compose failed');
    expect(p.text.endsWith('target 50% stop 100%')).toBe(true);
    expect(checkOf(p.text).terms).toMatchObject({ target: { value: 0.5, pct: true, signed: false }, stop: { value: 1, pct: true, signed: false } });
    // either alone; each span covers the whole term
    const s = composeRequest({ ...SPREAD, stop: '300' });
    if (!s.ok) throw new Error('compose failed');
    expect(checkOf(s.text).terms.target).toBeUndefined();
    const span = s.spans.find((x) => x.field === 'stop')!;
    expect(s.text.slice(span.from, span.to)).toBe('stop 300');
  });

  it('the form’s answer equals the typed request’s, and carries the exits', async () => {
    const c = composeRequest({ ...SPREAD, target: '+400', stop: '-300' });
    if (!c.ok) throw new Error('compose failed');
    const formed = await ask(c.text);
    const typed = await ask('+2 call 105 2027-03-19 @3.10 iv 28% -2 call 115 2027-03-19 @1.05 iv 25% spot 100 rate 4.5% yield 1% drift 9% vol 26% horizon 2027-02-15 asof 2027-01-04 target +400 stop -300');
    if (formed.kind !== 'answer' || typed.kind !== 'answer') throw new Error('not answered');
    expect(formed.json).toEqual(typed.json);
    expect((formed.json as { exits?: unknown }).exits).toBeDefined();
  });

  it('a level that is not one number with an optional % stays on its field', () => {
    const c = composeRequest({ ...SPREAD, target: '400 stop 1', stop: '5%%' });
    expect(c.ok).toBe(false);
    if (c.ok) return;
    expect(Object.keys(c.errors).sort()).toEqual(['stop', 'target']);
  });
});

describe('a rejection → the field that caused it', () => {
  const present = fieldsShown(2, false);

  async function mapped(values: FormValues) {
    const c = composeRequest(values);
    if (!c.ok) throw new Error(`compose failed: ${JSON.stringify(c.errors)}`);
    const r = await ask(c.text);
    if (r.kind !== 'rejected') throw new Error(`expected a rejection of ${c.text}`);
    return { field: fieldOf(r, c.spans, present), errors: formErrorsOf(r, c.spans, present), reply: r };
  }

  it('a caret under a token goes to the field that wrote it (vol 0.25 meant 25)', async () => {
    const m = await mapped({ ...SPREAD, vol: '0.25' });
    expect(m.field).toBe('vol');
    expect(m.errors.vol).toBe('vol 0.25% is below the 1% floor — did you mean 25%?');
  });

  it('a horizon after the earliest expiry goes to the horizon', async () => {
    expect((await mapped({ ...SPREAD, horizon: '2027-06-01' })).field).toBe('horizon');
  });

  it('a missing spot (the caret past the end) goes to spot by the words of the reason', async () => {
    const { spot: _s, ...rest } = SPREAD;
    const m = await mapped(rest);
    expect(m.field).toBe('spot');
    expect(m.errors.spot).toMatch(/^spot missing/);
  });

  it('a leg’s bad value goes to that leg’s field', async () => {
    const legs = SPREAD.legs.map((l) => ({ ...l }));
    legs[1].iv = '900';
    expect((await mapped({ ...SPREAD, legs })).field).toBe(legField(1, 'iv'));
    const legs2 = SPREAD.legs.map((l) => ({ ...l }));
    legs2[1].strike = '5000000';
    expect((await mapped({ ...SPREAD, legs: legs2 })).field).toBe(legField(1, 'strike'));
  });

  it('an uncertainty the grammar refuses lands on the uncertainty, never on a field the form lacks', async () => {
    const c = composeRequest({ ...SPREAD, driftSe: '6' });
    if (!c.ok) throw new Error('compose failed');
    const r = await ask(c.text);
    if (r.kind === 'answer') return; // the grammar reads uncertainties: nothing to map
    expect(fieldOf(r, c.spans, present)).toBe('drift_se');
  });

  it('a target or stop that makes no sense for the position lands on its own field', async () => {
    // this spread costs 410 (2 × 100 × (3.10 − 1.05)): nothing below −410 can be reached
    const below = await mapped({ ...SPREAD, target: '+400', stop: '-600' });
    expect(below.field).toBe('stop');
    expect(below.errors.stop).toMatch(/maximum loss/);
    const above = await mapped({ ...SPREAD, stop: '+5000' });
    expect(above.field).toBe('stop');
    expect(above.errors.stop).toMatch(/not below the position's P&L now/);
    const low = await mapped({ ...SPREAD, target: '-300', stop: '-100' });
    expect(low.field).toBe('target');
    expect(low.errors.target).toMatch(/not above the position's P&L now/);
    // a reason past every span is placed by its words
    expect(fieldOf({ at: 10_000, message: 'the stop is below the maximum loss' }, [], present)).toBe('stop');
    expect(fieldOf({ at: 10_000, message: 'targets and stops are computed for European exercise only' }, [], present)).toBe('target');
  });

  it('the reason is the line under the caret, cut to a field error’s length', async () => {
    const msg = 'Kolmo could not read this request:\n  +1 call\n      ^\nthe call needs a strike\nExample: +1 call 100';
    expect(reasonOf(msg)).toBe('the call needs a strike');
    expect(reasonOf(`x\n ^\n${'word '.repeat(80)}\nExample: y`).length).toBeLessThanOrEqual(150);
  });
});

describe('a logged request → the form, pre-filled', () => {
  it('the form’s own text comes back as the same values (round trip)', async () => {
    const c = composeRequest(SPREAD);
    if (!c.ok) throw new Error('compose failed');
    const p = prefillFromRequest(c.text, '2027-01-04');
    expect(p?.dropped).toEqual([]);
    expect(p?.values).toEqual({ ...SPREAD, legs: SPREAD.legs.map((l) => ({ ...l, entry: String(Number(l.entry)) })) });
  });

  it('typed requests with spans and a default expiry are read into dates against the check’s day', async () => {
    const p = prefillFromRequest('+1 put 95 6w iv 27% -1 put 85 iv 31% spot 100 exp 3m rate 4.5% style american horizon 30d', '2027-01-04');
    expect(p?.values.legs).toEqual([
      { qty: '1', type: 'put', strike: '95', expiry: '2027-02-15', iv: '27' },
      { qty: '-1', type: 'put', strike: '85', expiry: '2027-04-04', iv: '31' },
    ]);
    expect(p?.values).toMatchObject({ spot: '100', rate: '4.5', style: 'american', horizon: '2027-02-03' });
    // the pre-filled form composes into a request that means the same as the typed one, on that day
    const c = composeRequest({ ...p!.values, asof: '2027-01-04' });
    if (!c.ok) throw new Error('compose failed');
    const a = await ask(c.text);
    const b = await ask('+1 put 95 6w iv 27% -1 put 85 iv 31% spot 100 exp 3m rate 4.5% style american horizon 30d asof 2027-01-04');
    if (a.kind !== 'answer' || b.kind !== 'answer') throw new Error('not answered');
    expect(a.json.outcome).toEqual(b.json.outcome);
  });

  it('every example of the design notes that is a check pre-fills a form that composes and reads', async () => {
    for (const key of ['check', 'leg', 'shares', 'jumps', 'american'] as const) {
      const p = prefillFromRequest(exampleOf(key), '2027-01-04');
      expect(p, key).toBeDefined();
      const c = composeRequest(p!.values);
      expect(c.ok, key).toBe(true);
      if (c.ok) expect(parse(c.text).ok, `${key}: ${c.text}`).toBe(true);
    }
  });

  it('a comparison opens as its first part and says so; other verbs do not open', async () => {
    const p = prefillFromRequest('compare +1 call 90 3m iv 30% on FERNWK ; drift 0% ; drift 12%', '2027-01-04');
    expect(p?.values.symbol).toBe('FERNWK');
    expect(p?.dropped[0]).toMatch(/parts 2–3 of the comparison/);
    expect(prefillFromRequest(exampleOf('touch'), '2027-01-04')).toBeUndefined();
    expect(prefillFromRequest('not a request', '2027-01-04')).toBeUndefined();
  });

  it('a logged target and stop come back into their fields, as written, and nothing is listed as dropped', () => {
    const p = prefillFromRequest('+1 call 100 3m iv 30% spot 100 target +400 stop 100%', '2027-01-04');
    expect(p?.dropped).toEqual([]);
    expect(p?.values).toMatchObject({ target: '+400', stop: '100%' });
    const q = prefillFromRequest('+1 call 100 3m iv 30% spot 100 stop -250.5', '2027-01-04');
    expect(q?.values.stop).toBe('-250.5');
    expect(q?.values.target).toBeUndefined();
    // round trip: form → text → form
    const c = composeRequest({ ...SPREAD, target: '50%', stop: '-300' });
    if (!c.ok) throw new Error('compose failed');
    expect(prefillFromRequest(c.text, '2027-01-04')?.values).toMatchObject({ target: '50%', stop: '-300' });
  });

  it('the drift’s uncertainty is read from the text when the grammar takes it', async () => {
    const text = '+1 call 100 3m iv 30% spot 100 drift 9% ± 6%';
    const p = prefillFromRequest(text, '2027-01-04');
    if (!p) return; // the grammar does not read uncertainties (yet): nothing to pre-fill
    expect(p.values).toMatchObject({ drift: '9', driftSe: '6' });
  });
});

/** The state the platform would send for a view whose inputs hold their initial values. */
function stateOf(view: ReturnType<typeof checkFormView>): StateValues {
  const out: StateValues = {};
  for (const b of view.blocks) {
    if (b.type !== 'input') continue;
    const e = (b as unknown as { element: Record<string, unknown> }).element;
    const s: Record<string, unknown> = { type: e.type };
    if (e.type === 'number_input' || e.type === 'plain_text_input') s.value = (e.initial_value as string | undefined) ?? null;
    if (e.type === 'datepicker') s.selected_date = (e.initial_date as string | undefined) ?? null;
    if (e.type === 'static_select') s.selected_option = (e.initial_option as object | undefined) ?? null;
    out[b.block_id!] = { [String(e.action_id)]: s as never };
  }
  return out;
}

describe('the modal', () => {
  it('holds six legs within the platform’s 100 blocks, unique block ids, a title within 24 characters', async () => {
    const v = checkFormView({ meta: { legs: 6, pick: true }, symbols: ['FERNWK', 'QUILLOP'] });
    expect(v.blocks.length).toBeLessThanOrEqual(MODAL_BLOCKS_MAX);
    const ids = v.blocks.map((b) => b.block_id).filter((x) => x !== undefined);
    expect(new Set(ids).size).toBe(ids.length);
    expect(v.title.text.length).toBeLessThanOrEqual(24);
    expect(checkFormView({ meta: { legs: 2, of: 123456 } }).title.text.length).toBeLessThanOrEqual(24);
    expect(JSON.stringify(v.blocks)).not.toContain('kolmo_form_add_leg');
    expect(JSON.stringify(checkFormView({ meta: { legs: 5 } }).blocks)).toContain('kolmo_form_add_leg');
  });

  it('its inputs, as submitted, read back to the values it was filled with', async () => {
    const values: FormValues = { ...SPREAD, symbol: 'FERNWK', driftSe: '6', style: 'american', mult: '10', jumpRate: '0.5', jumpMean: '-8', jumpSd: '12', iv: '29', target: '+400', stop: '100%' };
    const v = checkFormView({ meta: { legs: 2 }, values, symbols: ['FERNWK'] });
    const back = readForm(stateOf(v), 2);
    expect(back.values).toEqual(values);
  });

  it('an empty form has two legs and a required first quantity; metadata survives and junk in it is dropped', async () => {
    const v = checkFormView({ meta: { legs: 2, channel: 'CDESKOPTS1' } });
    const qty = v.blocks.find((b) => b.block_id === 'leg1_qty');
    expect((qty as { optional?: boolean } | undefined)?.optional).toBe(false);
    expect(v.blocks.some((b) => b.block_id === 'leg3_qty')).toBe(false);
    expect(decodeMeta(v.private_metadata)).toEqual({ legs: 2, channel: 'CDESKOPTS1' });
    expect(decodeMeta(encodeMeta({ legs: 3, channel: 'CDESKOPTS1', thread: '1798761600.000001', of: 7 }))).toEqual({ legs: 3, channel: 'CDESKOPTS1', thread: '1798761600.000001', of: 7 });
    expect(decodeMeta('{"legs":99,"channel":"<!everyone>","of":-1}')).toEqual({ legs: 2 });
    expect(decodeMeta('not json')).toEqual({ legs: 2 });
  });

  it('a submitted value is one line of at most 100 characters, and an unknown type is ignored', async () => {
    const state: StateValues = {
      leg1_qty: { v: { value: '2' } },
      leg1_type: { v: { selected_option: { value: 'straddle' } } },
      leg1_strike: { v: { value: `105\n${'9'.repeat(300)}` } },
    };
    const r = readForm(state, 1);
    expect(r.values.legs[0].type).toBeUndefined();
    expect(r.values.legs[0].strike!.length).toBeLessThanOrEqual(100);
    expect(r.values.legs[0].strike).not.toContain('\n');
  });
});
