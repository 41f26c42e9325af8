/**
 * Address interning: every distinct address text gets a small integer id once, so per-window sets,
 * sketches and history work on integers. Ids of evicted hosts are reused through a free list.
 */
export class AddressTable {
  private ids = new Map<string, number>();
  private names: string[] = [];
  private free: number[] = [];

  id(addr: string): number {
    let id = this.ids.get(addr);
    if (id === undefined) {
      id = this.free.length > 0 ? this.free.pop()! : this.names.length;
      this.ids.set(addr, id);
      this.names[id] = addr;
    }
    return id;
  }

  /** The id of a known address, or -1. */
  peek(addr: string): number {
    return this.ids.get(addr) ?? -1;
  }

  name(id: number): string {
    return this.names[id]!;
  }

  release(id: number): void {
    const n = this.names[id];
    if (n === undefined) return;
    this.ids.delete(n);
    this.free.push(id);
  }

  /** Upper bound of ids handed out so far (array sizes). */
  get capacity(): number {
    return this.names.length;
  }

  get size(): number {
    return this.ids.size;
  }

  /** Every id's address (undefined for ids never handed out) and the free list, for the state store. */
  snapshot(): AddressTableSnapshot {
    return { names: [...this.names], free: [...this.free] };
  }

  /** Replaces the table with a snapshot: the same addresses get the same ids. */
  restore(s: AddressTableSnapshot): void {
    this.names = [...s.names] as string[];
    this.free = [...s.free];
    this.ids.clear();
    const freed = new Set(s.free);
    s.names.forEach((n, id) => { if (n !== undefined && n !== null && !freed.has(id)) this.ids.set(n, id); });
  }
}

export interface AddressTableSnapshot {
  names: readonly (string | undefined | null)[];
  free: readonly number[];
}
