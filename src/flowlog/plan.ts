import { Kind, VARLEN, isReverseKind, kindOf, rankOf } from './elements.js';

/**
 * A template compiled once into typed arrays (field kind, field length), so every data record is
 * decoded by one loop over integers with no per-field allocation.
 */
export class DecodePlan {
  readonly kinds: Uint8Array;
  /** Field lengths; VARLEN (65535) marks a variable-length field. */
  readonly lens: Uint16Array;
  /** Smallest possible record: fixed lengths plus one length octet per variable field (>= 1). */
  readonly minLen: number;
  readonly hasVar: boolean;
  /** Carries RFC 5103 reverse counters: a missing reverse count then means zero, not unknown. */
  readonly biflow: boolean;
  readonly hasFlags: boolean;
  readonly hasRevFlags: boolean;
  /** Fields the plan reads (not skipped), for the counters. */
  readonly mapped: number;

  /**
   * @param pens   enterprise number per field (0 = IANA)
   * @param ids    element id per field
   * @param lens   field length per field (VARLEN for variable)
   * @param isOptions options templates describe the exporter, not flows: their records are not emitted
   * @param scopeCount number of leading scope fields (options templates); those are never mapped
   * @param definition the template's wire bytes, to tell a redefinition from a refresh
   */
  constructor(
    readonly templateId: number,
    pens: ArrayLike<number>,
    ids: ArrayLike<number>,
    lens: ArrayLike<number>,
    readonly isOptions: boolean,
    readonly scopeCount: number,
    readonly definition: Uint8Array,
  ) {
    const n = ids.length;
    this.kinds = new Uint8Array(n);
    this.lens = new Uint16Array(n);
    let min = 0, hasVar = false, biflow = false, hasFlags = false, hasRevFlags = false, mapped = 0;
    for (let i = 0; i < n; i++) {
      const len = lens[i]!;
      const k = i < scopeCount ? Kind.Skip : kindOf(pens[i]!, ids[i]!, len);
      this.kinds[i] = k;
      this.lens[i] = len;
      if (len === VARLEN) { hasVar = true; min += 1; } else min += len;
      if (isReverseKind(k)) biflow = true;
      if (k === Kind.Flags) hasFlags = true;
      if (k === Kind.RevFlags) hasRevFlags = true;
      if (k !== Kind.Skip) mapped++;
    }
    // several elements for one field (octetDeltaCount and octetTotalCount, vlanId and dot1qVlanId):
    // the best-ranked one is read, the others skipped, whatever their order in the template
    const best = new Map<Kind, number>();
    for (let i = 0; i < n; i++) {
      const k = this.kinds[i]!;
      if (k === Kind.Skip) continue;
      const r = rankOf(pens[i]!, ids[i]!);
      best.set(k, Math.min(best.get(k) ?? r, r));
    }
    for (let i = 0; i < n; i++) {
      const k = this.kinds[i]!;
      if (k !== Kind.Skip && rankOf(pens[i]!, ids[i]!) !== best.get(k)) { this.kinds[i] = Kind.Skip; mapped--; }
    }
    this.minLen = min;
    this.hasVar = hasVar;
    this.biflow = biflow;
    this.hasFlags = hasFlags;
    this.hasRevFlags = hasRevFlags;
    this.mapped = mapped;
  }

  get fieldCount(): number { return this.kinds.length; }

  sameDefinition(def: Uint8Array): boolean {
    const a = this.definition;
    if (a.length !== def.length) return false;
    for (let i = 0; i < a.length; i++) if (a[i] !== def[i]) return false;
    return true;
  }
}
