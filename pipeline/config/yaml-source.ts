/**
 * Reads YAML text into a positioned document, turning every problem the YAML layer can see —
 * syntax errors, duplicate keys, alias bombs, runaway nesting — into a ConfigError with a line.
 */
import { isAlias, isCollection, isPair, isScalar, LineCounter, parseDocument, visit, type Alias, type Document, type Node } from 'yaml';
import { ConfigError } from './errors.js';
import type { SourceContext } from './validate.js';

/** Expanded-node budget for aliases; a real config needs a handful, a "billion laughs" document needs billions. */
export const MAX_ALIAS_COUNT = 50;
/** No config schema is anywhere near this deep; anything deeper is a mistake or an attack. */
export const MAX_DEPTH = 64;

export function readYaml(text: string, file: string): SourceContext {
  const lineCounter = new LineCounter();
  const doc = parseDocument(text, { lineCounter, keepSourceTokens: true, uniqueKeys: true, prettyErrors: true });
  const first = doc.errors[0];
  if (first !== undefined) {
    const pos = first.linePos?.[0] ?? lineCounter.linePos(first.pos[0]);
    // yaml's composer recurses per nesting level and reports a blown stack as resource exhaustion.
    if (first.code === 'RESOURCE_EXHAUSTION') throw depthError(file, pos.line, pos.col, '');
    const duplicate = first.code === 'DUPLICATE_KEY';
    throw new ConfigError({
      file,
      line: pos.line,
      column: pos.col,
      path: duplicate ? keyPathAt(doc, first.pos[0]) : '',
      expected: duplicate ? 'each key once' : 'valid YAML',
      problem: duplicate ? 'duplicate key' : `YAML syntax error: ${firstLine(first.message)}`,
      hint: duplicate
        ? 'each key may appear only once in a mapping; merge the two entries'
        : 'check indentation, colons after keys, and closing brackets or quotes',
    });
  }
  const ctx: SourceContext = { file, doc, lineCounter };
  checkDepth(ctx, doc.contents, 1, '');
  checkAliases(ctx);
  return ctx;
}

/** yaml's messages end with " at line L, column C:" and a code frame; we report the position ourselves. */
function firstLine(message: string): string {
  return message.split('\n')[0].replace(/ at line \d+, column \d+:?$/, '');
}

function depthError(file: string, line: number, column: number, path: string): ConfigError {
  return new ConfigError({
    file,
    line,
    column,
    path,
    expected: `at most ${MAX_DEPTH} levels of nesting`,
    problem: `nesting deeper than ${MAX_DEPTH} levels`,
    hint: 'a foldstack config is only a few levels deep; look for runaway brackets or indentation',
  });
}

function childPath(path: string, key: unknown, index: number): string {
  const part = isScalar(key) ? String(key.value) : `[${index}]`;
  return path === '' ? part : `${path}.${part}`;
}

function checkDepth(ctx: SourceContext, node: unknown, depth: number, path: string): void {
  if (!isCollection(node)) return;
  if (depth > MAX_DEPTH) {
    const { line, col } = ctx.lineCounter.linePos(node.range?.[0] ?? 0);
    throw depthError(ctx.file, line, col, path);
  }
  node.items.forEach((item: unknown, i: number) => {
    if (isPair(item)) {
      checkDepth(ctx, item.key, depth + 1, path);
      checkDepth(ctx, item.value, depth + 1, childPath(path, item.key, i));
    } else {
      // List positions are left out: at this depth a path of sixty "[0]"s helps nobody.
      checkDepth(ctx, item, depth + 1, path);
    }
  });
}

/** The dotted path of the mapping key starting at `offset` (for duplicate-key messages). */
function keyPathAt(doc: Document.Parsed, offset: number): string {
  let found = '';
  const walk = (node: unknown, path: string): void => {
    if (!isCollection(node)) return;
    node.items.forEach((item: unknown, i: number) => {
      if (isPair(item)) {
        const p = childPath(path, item.key, i);
        if (isScalar(item.key) && item.key.range?.[0] === offset) found = p;
        walk(item.value, p);
      } else {
        walk(item, path === '' ? `[${i}]` : `${path}[${i}]`);
      }
    });
  };
  walk(doc.contents, '');
  return found;
}

/**
 * yaml's own guard (`maxAliasCount`) detects the bomb; it does not say where, so on failure we replay
 * its accounting alias by alias in document order to find the first alias over the budget.
 */
function checkAliases(ctx: SourceContext): void {
  try {
    ctx.doc.toJS({ maxAliasCount: MAX_ALIAS_COUNT, mapAsMap: true });
  } catch (err) {
    if (!(err instanceof ReferenceError)) throw err;
    const alias = findOffendingAlias(ctx.doc);
    const { line, col } = ctx.lineCounter.linePos(alias?.range?.[0] ?? 0);
    const unresolved = alias !== undefined && alias.resolve(ctx.doc) === undefined;
    throw new ConfigError({
      file: ctx.file,
      line,
      column: col,
      path: '',
      expected: unresolved ? 'an anchor defined before its alias' : `aliases expanding to at most ${MAX_ALIAS_COUNT} nodes`,
      problem: unresolved ? `alias *${alias.source} refers to no anchor` : 'too many alias expansions (a YAML alias bomb?)',
      hint: unresolved
        ? `define "&${alias.source}" before using "*${alias.source}"`
        : 'write the repeated values out instead of nesting anchors and aliases',
    });
  }
}

function findOffendingAlias(doc: Document.Parsed): Alias | undefined {
  const uses = new Map<Node, number>();
  const weights = new Map<Node, number>();
  const weightOf = (node: unknown): number => {
    if (isAlias(node)) {
      const target = node.resolve(doc);
      return target === undefined ? 0 : (uses.get(target) ?? 0) * (weights.get(target) ?? 0);
    }
    if (isPair(node)) return Math.max(weightOf(node.key), weightOf(node.value));
    if (isCollection(node)) return node.items.reduce((m: number, item: unknown) => Math.max(m, weightOf(item)), 0);
    return 1;
  };
  let offending: Alias | undefined;
  visit(doc, {
    Alias(_key, alias) {
      const target = alias.resolve(doc);
      if (target === undefined) {
        offending = alias;
        return visit.BREAK;
      }
      uses.set(target, (uses.get(target) ?? 0) + 1);
      if (!weights.has(target)) weights.set(target, weightOf(target));
      if ((uses.get(target) ?? 0) * (weights.get(target) ?? 0) > MAX_ALIAS_COUNT) {
        offending = alias;
        return visit.BREAK;
      }
      return undefined;
    },
  });
  return offending;
}
