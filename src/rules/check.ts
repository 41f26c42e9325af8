import { isMap, isScalar, isSeq, type LineCounter, type Node, type Pair } from 'yaml';

/** A YAML node as the parser hands it out (values of empty keys may be null). */
export type YNode = Node | null | undefined;

export interface Field { key: Node; value: YNode }

/**
 * Reads one rule file's YAML nodes with position-carrying errors (`file:line:column: reason`, both
 * 1-based as the yaml package's LineCounter gives them). Every reader returns null after recording an
 * error, so one pass collects every error of a file.
 */
export class FileCheck {
  constructor(readonly file: string, private readonly lines: LineCounter, readonly errors: string[]) {}

  where(node: YNode, fallback?: YNode): string {
    const at = node?.range?.[0] ?? fallback?.range?.[0] ?? 0;
    const { line, col } = this.lines.linePos(at);
    return `${this.file}:${line}:${col}`;
  }

  errorAtOffset(offset: number, reason: string): void {
    const { line, col } = this.lines.linePos(offset);
    this.errors.push(`${this.file}:${line}:${col}: ${reason}`);
  }

  error(node: YNode, reason: string, fallback?: YNode): null {
    this.errors.push(`${this.where(node, fallback)}: ${reason}`);
    return null;
  }

  /** A mapping with only `keys`; unknown keys are errors at the key. */
  map(node: YNode, what: string, keys: readonly string[], fallback?: YNode): Map<string, Field> | null {
    if (!isMap(node)) return this.error(node, `${what} must be a mapping, got ${describeNode(node)}`, fallback);
    const out = new Map<string, Field>();
    for (const pair of node.items as Pair<Node, YNode>[]) {
      const k = pair.key;
      if (!isScalar(k) || typeof k.value !== 'string') { this.error(k, `${what}: keys must be plain names`, node); continue; }
      if (!keys.includes(k.value)) {
        this.error(k, `unknown key '${k.value}' in ${what} (expected ${keys.join(', ')})`);
        continue;
      }
      out.set(k.value, { key: k, value: pair.value });
    }
    return out;
  }

  list(f: Field, what: string): Node[] | null {
    if (!isSeq(f.value)) return this.error(f.value, `${what} must be a list, got ${describeNode(f.value)}`, f.key);
    return f.value.items as Node[];
  }

  str(node: YNode, what: string, fallback?: YNode): string | null {
    if (isScalar(node) && typeof node.value === 'string') return node.value;
    return this.error(node, `${what} must be a string, got ${describeNode(node)}`, fallback);
  }

  bool(f: Field, what: string): boolean | null {
    if (isScalar(f.value) && typeof f.value.value === 'boolean') return f.value.value;
    return this.error(f.value, `${what} must be true or false, got ${describeNode(f.value)}`, f.key);
  }

  num(node: YNode, what: string, fallback?: YNode): number | null {
    if (isScalar(node) && typeof node.value === 'number' && Number.isFinite(node.value)) return node.value;
    return this.error(node, `${what} must be a number, got ${describeNode(node)}`, fallback);
  }
}

/** What a node is, for messages: "a string ('x')", "a list", "nothing". */
export function describeNode(node: YNode): string {
  if (node === null || node === undefined) return 'nothing';
  if (isMap(node)) return 'a mapping';
  if (isSeq(node)) return 'a list';
  if (isScalar(node)) {
    const v = node.value;
    if (v === null) return 'nothing';
    if (typeof v === 'string') return `a string ('${v.length > 40 ? `${v.slice(0, 40)}...` : v}')`;
    if (typeof v === 'number') return `a number (${v})`;
    if (typeof v === 'boolean') return `a boolean (${v})`;
  }
  return 'an unsupported value';
}
