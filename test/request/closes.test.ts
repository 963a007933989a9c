/**
 * Reading closes: inline tokens and CSV/TSV text (RFC 4180 shapes: a header row, quoted fields,
 * CRLF line ends), files that are not text, and a newest-first export read in reverse.
 */
import { describe, expect, it } from 'vitest';
import { fileText, readCloseToken, readClosesText } from '../../src/request/closes.js';

describe('inline closes', () => {
  it('a price, or DATE:PRICE', () => {
    expect(readCloseToken('84.10')).toEqual({ ok: true, close: { close: 84.1 } });
    expect(readCloseToken('2026-01-05:84.10')).toEqual({ ok: true, close: { date: '2026-01-05', close: 84.1 } });
    expect(readCloseToken('.5')).toEqual({ ok: true, close: { close: 0.5 } });
  });
  it('refuses non-positive, non-numeric and badly dated closes, with an example', () => {
    for (const t of ['0', '-3', '84,1', 'abc', '2026-01-05:', '2026-1-5:84', '2026-01-05:-1', '1e3']) {
      const r = readCloseToken(t);
      expect(r.ok, t).toBe(false);
      if (!r.ok) expect(r.example).toMatch(/84\.10$/);
    }
  });
});

describe('files', () => {
  it('CSV with a header (any column order, quoted fields, CRLF), TSV, semicolons, no header', () => {
    const csv = 'Close,"Date"\r\n84.10,2026-01-05\r\n84.95,2026-01-06\r\n';
    expect(readClosesText('p.csv', csv)).toEqual({
      ok: true,
      value: { closes: [{ date: '2026-01-05', close: 84.1 }, { date: '2026-01-06', close: 84.95 }], lines: [2, 3], notes: [] },
    });
    const tsv = '# exported\n2026-01-05\t84.10\n\n2026-01-06\t84.95\n';
    const t = readClosesText('p.tsv', tsv);
    expect(t.ok && t.value.closes).toEqual([{ date: '2026-01-05', close: 84.1 }, { date: '2026-01-06', close: 84.95 }]);
    expect(t.ok && t.value.lines).toEqual([2, 4]);
    const semi = 'date;open;close\n2026-01-05;83;84.10\n';
    const s = readClosesText('p.csv', semi);
    expect(s.ok && s.value.closes).toEqual([{ date: '2026-01-05', close: 84.1 }]);
    const adj = 'date,close,adj close\n2026-01-05,84.10,80.00\n';
    const a = readClosesText('p.csv', adj);
    expect(a.ok && a.value.closes).toEqual([{ date: '2026-01-05', close: 80 }]);
    const only = '84.10\n84.95\n';
    const o = readClosesText('p.txt', only);
    expect(o.ok && o.value.closes).toEqual([{ close: 84.1 }, { close: 84.95 }]);
  });
  it('newest first is read in reverse, and says so', () => {
    const r = readClosesText('x.csv', 'date,close\n2026-01-07,3\n2026-01-06,2\n2026-01-05,1\n');
    expect(r.ok && r.value.closes.map((c) => c.close)).toEqual([1, 2, 3]);
    expect(r.ok && r.value.lines).toEqual([4, 3, 2]);
    expect(r.ok && r.value.notes[0]).toMatch(/newest close first/);
  });
  it('names the line of a bad row', () => {
    const r = readClosesText('x.csv', 'date,close\n2026-01-05,84.1\n2026-01-06,n/a\n');
    expect(r).toMatchObject({ ok: false, line: 3 });
    expect(!r.ok && r.message).toMatch(/^line 3 of x\.csv/);
    expect(readClosesText('x.csv', 'date,close\n05/01/2026,84.1\n')).toMatchObject({ ok: false, line: 2 });
    expect(readClosesText('x.csv', 'when,value\n2026-01-05,84.1\n')).toMatchObject({ ok: false, line: 1 });
    expect(readClosesText('x.csv', '\n\n')).toMatchObject({ ok: false });
  });
  it('bytes that are not text are refused; a byte-order mark is skipped', () => {
    expect(fileText(new Uint8Array([0x89, 0x50, 0x4e, 0x47, 0, 1, 2])).ok).toBe(false);
    expect(fileText(new Uint8Array([0xff, 0xfe, 0x41]))).toMatchObject({ ok: false });
    expect(fileText(new TextEncoder().encode('\ufeffdate,close\n'))).toEqual({ ok: true, text: 'date,close\n' });
  });
});
