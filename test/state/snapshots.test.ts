import { describe, expect, it } from 'vitest';
import { AddressTable } from '../../src/window/intern.js';
import { PairHistory } from '../../src/window/pair-history.js';

// Snapshot/restore of the window structures the scenarios never push to their limits: address ids
// after releases, and the peer history's second generation. Behaviour is ours; no outside source.
describe('AddressTable snapshot', () => {
  it('gives every address its id back, freed ids stay free and are reused in the same order', () => {
    const t = new AddressTable();
    for (const a of ['10.60.0.2', '10.60.0.5', '192.0.2.53', '198.51.100.10']) t.id(a);
    t.release(1);
    t.release(3);
    const u = new AddressTable();
    u.restore(t.snapshot());
    expect(['10.60.0.2', '192.0.2.53', '10.60.0.5'].map((a) => u.peek(a))).toEqual([0, 2, -1]);
    expect([u.size, u.capacity]).toEqual([t.size, t.capacity]);
    expect(u.id('203.0.113.9')).toBe(t.id('203.0.113.9'));
    expect(u.id('203.0.113.10')).toBe(t.id('203.0.113.10'));
  });
});

describe('PairHistory snapshot', () => {
  it('keeps both generations: the same pairs known, forgotten and new afterwards', () => {
    const h = new PairHistory(1024); // 1024 pairs a generation: 3000 pairs fill one and start another
    for (let i = 0; i < 3000; i++) h.add(i % 97, i);
    const r = new PairHistory(1024);
    r.restore(h.snapshot());
    expect([r.size, r.forgotten]).toEqual([h.size, h.forgotten]);
    expect(h.forgotten).toBeGreaterThan(0);
    for (let i = 0; i < 3000; i++) expect(r.has(i % 97, i)).toBe(h.has(i % 97, i));
    for (let i = 2500; i < 4000; i++) expect(r.add(i % 97, i)).toBe(h.add(i % 97, i));
    expect([r.size, r.forgotten]).toEqual([h.size, h.forgotten]);
  });
});
