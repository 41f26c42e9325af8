import ipaddr from 'ipaddr.js';
import { normaliseAddress } from '../util/addr.js';
import type { Endpoint } from './packets.js';

/** Router MAC that every outside address is seen behind (locally administered). */
const GATEWAY_MAC = Uint8Array.of(0x02, 0x60, 0x00, 0x00, 0x00, 0x01);
const NO_V6 = new Uint8Array(16);

/** Builds an endpoint from address text; inside hosts get a MAC derived from the address. */
export function endpoint(text: string, inside: boolean): Endpoint {
  const norm = normaliseAddress(text);
  if (norm === null) throw new Error(`scenario: bad address ${text}`);
  const a = ipaddr.parse(norm);
  const bytes = Uint8Array.from(a.toByteArray());
  const v6 = a.kind() === 'ipv6';
  const v4 = v6 ? 0 : ((bytes[0]! << 24) | (bytes[1]! << 16) | (bytes[2]! << 8) | bytes[3]!) >>> 0;
  const tail = bytes.subarray(bytes.length - 4);
  const mac = inside ? Uint8Array.of(0x02, v6 ? 0x66 : 0x60, tail[0]!, tail[1]!, tail[2]!, tail[3]!) : GATEWAY_MAC;
  return { v6, v4, v6bytes: v6 ? bytes : NO_V6, mac, text: norm };
}

/** Interns outside endpoints so each peer address is built once. */
export class EndpointCache {
  private readonly map = new Map<string, Endpoint>();
  get(text: string, inside = false): Endpoint {
    let e = this.map.get(text);
    if (!e) {
      e = endpoint(text, inside);
      this.map.set(text, e);
    }
    return e;
  }
}
