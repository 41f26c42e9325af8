import { readdirSync, readFileSync, statSync } from 'node:fs';
import { extname, join } from 'node:path';
import { LineCounter, parseDocument, visit, type Document } from 'yaml';
import { FileCheck } from './check.js';

/** Rule files are small; anything larger is a mistake (or an attempt to exhaust memory). */
export const MAX_RULE_FILE_BYTES = 1 << 20;
export const RULE_FILE_EXTENSIONS: readonly string[] = ['.yaml', '.yml', '.json'];

export interface RuleSource { check: FileCheck; doc: Document.Parsed }

/**
 * One file as itself, or a folder's rule files (by extension, sorted by name, not recursive). A
 * missing path or a folder without rule files is an error at `path:1:1`.
 */
export function ruleFiles(path: string, errors: string[]): string[] {
  let isDir: boolean;
  try {
    isDir = statSync(path).isDirectory();
  } catch {
    errors.push(`${path}:1:1: no such file or folder`);
    return [];
  }
  if (!isDir) return [path];
  const files = readdirSync(path).filter((n) => RULE_FILE_EXTENSIONS.includes(extname(n).toLowerCase())).sort();
  if (files.length === 0) errors.push(`${path}:1:1: no rule files (${RULE_FILE_EXTENSIONS.join(', ')}) in this folder`);
  return files.map((n) => join(path, n));
}

/**
 * Reads and parses one rule file: YAML 1.2 core schema (JSON is a subset), so a rule file holds only
 * data. Explicit tags, anchors and aliases are refused: nothing in a rule file may construct objects
 * or repeat hidden content. Syntax errors carry the parser's position.
 */
export function readRuleSource(file: string, errors: string[]): RuleSource | null {
  const lines = new LineCounter();
  const check = new FileCheck(file, lines, errors);
  let text: string;
  try {
    const size = statSync(file).size;
    if (size > MAX_RULE_FILE_BYTES) {
      errors.push(`${file}:1:1: file too large (${size} bytes, at most ${MAX_RULE_FILE_BYTES})`);
      return null;
    }
    text = readFileSync(file, 'utf8');
  } catch (e) {
    errors.push(`${file}:1:1: cannot read: ${(e as Error).message}`);
    return null;
  }
  const doc = parseDocument(text, { lineCounter: lines, prettyErrors: false, schema: 'core', uniqueKeys: true });
  const before = errors.length;
  for (const e of doc.errors) check.errorAtOffset(e.pos[0], `YAML syntax: ${firstLine(e.message)}`);
  if (errors.length > before) return null;
  visit(doc, {
    Node(_key, node) {
      if (node.tag !== undefined) check.error(node, `tags are not allowed in rule files (${node.tag})`);
      if ('anchor' in node && node.anchor) check.error(node, 'anchors are not allowed in rule files');
    },
    Alias(_key, node) {
      check.error(node, 'aliases are not allowed in rule files');
    },
  });
  return errors.length > before ? null : { check, doc };
}

function firstLine(s: string): string {
  const i = s.indexOf('\n');
  return i < 0 ? s : s.slice(0, i);
}
