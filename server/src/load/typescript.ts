/**
 * Static reading of TypeScript specs (`*.mdp.ts`) with ts-morph: finds the default export
 * `defineMdp({...})` (or a plain object), reads the literal fields (name, objective, discount,
 * horizon, rewardTerms, start) with their source ranges, records where every member is written,
 * and finds calls of unseeded random sources. Nothing here runs the spec's code, and `defineMdp`
 * need not resolve: only the syntax tree is used. Never throws for any input text.
 */
import { Node, Project, SyntaxKind, type Expression, type ObjectLiteralExpression, type SourceFile } from 'ts-morph';
import { canonicalKey } from '../sandbox/runtime';
import type { Finding } from '../findings';
import { schemaFinding } from '../rules/schema';
import { syntaxFinding } from '../rules/syntax';
import type { RandomnessSite, TypeScriptEvidence, TypeScriptMember } from './typescript-evidence';
import {
  emptySpec,
  type Objective,
  type ParsedSpec,
  type RewardTermSpec,
  type Span,
  type TermDirection,
} from './types';

export interface TypeScriptReading {
  spec: ParsedSpec;
  /** `syntax` findings (parse errors) and `schema` findings: no default export, literal fields of the wrong type or range. */
  findings: Finding[];
  /** The `defineMdp({...})` object was found (otherwise nothing can run). */
  found: boolean;
  /** Syntax errors were found; the code is then not run. */
  syntaxErrors: boolean;
  /** Fields written as something other than a literal, to be read from the running code. */
  dynamicFields: Set<string>;
  /** Set when reading failed through a bug of ours (ts-morph threw), not through a problem of the text. */
  internalError?: string;
}

/** Field names the loader knows; other members are reported, as JSON specs report unknown keys. */
export const KNOWN_MEMBERS = new Set([
  'name',
  'objective',
  'discount',
  'horizon',
  'rewardTerms',
  'start',
  'startDistribution',
  'actions',
  'outcomes',
  'terminal',
  'sample',
  'stateKey',
]);

const RANDOM_MEMBERS: Record<string, Set<string>> = {
  Math: new Set(['random']),
  Date: new Set(['now']),
  performance: new Set(['now']),
  crypto: new Set(['getRandomValues', 'randomUUID', 'randomInt', 'randomBytes', 'randomFillSync']),
};

let project: Project | undefined;

function sourceFileOf(text: string): SourceFile {
  project ??= new Project({
    useInMemoryFileSystem: true,
    skipLoadingLibFiles: true,
    skipFileDependencyResolution: true,
    compilerOptions: { noLib: true },
  });
  return project.createSourceFile('/episcope-spec.mdp.ts', text, { overwrite: true });
}

function spanOf(node: Node): Span {
  return { start: node.getStart(), end: node.getEnd() };
}

/** Reads a TypeScript spec's text. */
export function readTypeScriptSpec(text: string): TypeScriptReading {
  const rootSpan = { start: 0, end: text.length };
  const spec = emptySpec('ts', rootSpan);
  const evidence: TypeScriptEvidence = {
    members: {},
    form: 'unknown',
    executed: false,
    staticRandomness: [],
    runtimeRandomness: [],
    modelErrors: [],
    structuralProblems: [],
    nonFiniteRewards: [],
    nondeterminism: [],
  };
  spec.typescript = evidence;
  const reading: TypeScriptReading = {
    spec,
    findings: [],
    found: false,
    syntaxErrors: false,
    dynamicFields: new Set(),
  };
  try {
    const file = sourceFileOf(text);
    try {
      readFile(file, reading, evidence);
    } finally {
      project?.removeSourceFile(file);
    }
  } catch (error) {
    reading.internalError = `the spec could not be read because of an internal error of Episcope (${error instanceof Error ? error.message : String(error)}); please report it`;
  }
  return reading;
}

function readFile(file: SourceFile, reading: TypeScriptReading, evidence: TypeScriptEvidence): void {
  const { spec } = reading;
  const diagnostics =
    (
      file.compilerNode as unknown as {
        parseDiagnostics?: Array<{ start?: number; length?: number; messageText: unknown }>;
      }
    ).parseDiagnostics ?? [];
  for (const diagnostic of diagnostics.slice(0, 20)) {
    const start = diagnostic.start ?? 0;
    const message =
      typeof diagnostic.messageText === 'string'
        ? diagnostic.messageText
        : String((diagnostic.messageText as { messageText?: string }).messageText ?? 'syntax error');
    reading.findings.push(
      syntaxFinding(`syntax error: ${message}`, { start, end: start + Math.max(1, diagnostic.length ?? 1) }),
    );
    reading.syntaxErrors = true;
  }
  evidence.staticRandomness = findRandomness(file);
  evidence.literals = stateLiterals(file);

  const object = findDefinition(file);
  if (!object) {
    reading.findings.push(
      schemaFinding(
        'the spec has no default export of an object: write `export default defineMdp({ ... })`',
        firstLineSpan(file),
      ),
    );
    return;
  }
  reading.found = true;
  spec.rootSpan = spanOf(object);

  for (const property of object.getProperties()) {
    const member = memberOf(file, property);
    if (!member) {
      if (Node.isSpreadAssignment(property)) reading.dynamicFields.add('...');
      continue;
    }
    evidence.members[member.name] = member.info;
    if (!KNOWN_MEMBERS.has(member.name)) {
      reading.findings.push(
        schemaFinding(
          `unknown member "${member.name}"; a spec has ${[...KNOWN_MEMBERS].join(', ')}`,
          member.info.nameSpan,
        ),
      );
      continue;
    }
    if (member.info.isFunction || !member.value) {
      if (
        ['name', 'objective', 'discount', 'horizon', 'rewardTerms', 'startDistribution'].includes(member.name) ||
        (member.name === 'start' && !member.info.isFunction)
      ) {
        reading.dynamicFields.add(member.name);
      }
      continue;
    }
    readField(member.name, member.value, member.info, reading);
  }
  const members = evidence.members;
  evidence.form = members.outcomes ? 'enumerable' : members.sample ? 'sampled' : 'unknown';
  if (!members.discount && !reading.dynamicFields.has('...')) {
    reading.findings.push(
      schemaFinding(
        'the spec has no discount (0 <= discount <= 1)',
        spanOf(object.getFirstChildByKind(SyntaxKind.OpenBraceToken) ?? object),
      ),
    );
  }
  if (!members.actions && !reading.dynamicFields.has('...')) {
    reading.findings.push(
      schemaFinding(
        'the spec has no actions(state) function',
        spanOf(object.getFirstChildByKind(SyntaxKind.OpenBraceToken) ?? object),
      ),
    );
  }
  if (!members.outcomes && !members.sample && !reading.dynamicFields.has('...')) {
    reading.findings.push(
      schemaFinding(
        'the spec has neither outcomes(state, action) (an enumerable model) nor sample(state, action, rng) (a sampled model)',
        spanOf(object.getFirstChildByKind(SyntaxKind.OpenBraceToken) ?? object),
      ),
    );
  }
  if (!members.start && !members.startDistribution && !reading.dynamicFields.has('...')) {
    reading.findings.push(
      schemaFinding(
        'the spec has no start state',
        spanOf(object.getFirstChildByKind(SyntaxKind.OpenBraceToken) ?? object),
      ),
    );
  }
}

function firstLineSpan(file: SourceFile): Span {
  const text = file.getFullText();
  const end = text.indexOf('\n');
  return { start: 0, end: end < 0 ? text.length : end };
}

/** Strips `as`, `satisfies`, `!` and parentheses. */
function unwrap(node: Node | undefined): Node | undefined {
  let current = node;
  while (
    current &&
    (Node.isAsExpression(current) ||
      Node.isSatisfiesExpression(current) ||
      Node.isParenthesizedExpression(current) ||
      Node.isNonNullExpression(current))
  ) {
    current = current.getExpression();
  }
  return current;
}

/** Follows an identifier to the initializer of a `const` of the same file. */
function resolveConst(file: SourceFile, node: Node | undefined): Node | undefined {
  const bare = unwrap(node);
  if (!bare || !Node.isIdentifier(bare)) return bare;
  const declaration = file.getVariableDeclaration(bare.getText());
  return declaration ? unwrap(declaration.getInitializer()) : bare;
}

/** The object literal of `export default defineMdp({...})`, `export default {...}` or `export default spec`. */
function findDefinition(file: SourceFile): ObjectLiteralExpression | undefined {
  const assignment = file.getExportAssignment((a) => !a.isExportEquals());
  let expression: Node | undefined = assignment ? resolveConst(file, assignment.getExpression()) : undefined;
  if (!assignment) {
    // `const spec = defineMdp({...}); export { spec as default };`
    for (const declaration of file.getExportedDeclarations().get('default') ?? []) {
      if (Node.isVariableDeclaration(declaration)) expression = unwrap(declaration.getInitializer());
    }
  }
  if (expression && Node.isCallExpression(expression)) {
    const [first] = expression.getArguments();
    expression = resolveConst(file, first);
  }
  return expression && Node.isObjectLiteralExpression(expression) ? expression : undefined;
}

function memberOf(
  file: SourceFile,
  property: Node,
): { name: string; info: TypeScriptMember; value?: Expression } | undefined {
  if (Node.isMethodDeclaration(property)) {
    const nameNode = property.getNameNode();
    return {
      name: propertyName(nameNode),
      info: { name: propertyName(nameNode), nameSpan: spanOf(nameNode), span: spanOf(property), isFunction: true },
    };
  }
  if (Node.isShorthandPropertyAssignment(property)) {
    const name = property.getName();
    const target = functionDeclarationNamed(file, name);
    return {
      name,
      info: {
        name,
        nameSpan: target ? spanOf(target.name) : spanOf(property.getNameNode()),
        span: target ? target.span : spanOf(property),
        isFunction: Boolean(target),
      },
      value: target
        ? undefined
        : (unwrap(file.getVariableDeclaration(name)?.getInitializer()) as Expression | undefined),
    };
  }
  if (Node.isPropertyAssignment(property)) {
    const nameNode = property.getNameNode();
    const name = propertyName(nameNode);
    const initializer = unwrap(property.getInitializer());
    let isFunction = Boolean(
      initializer && (Node.isArrowFunction(initializer) || Node.isFunctionExpression(initializer)),
    );
    let value = initializer as Expression | undefined;
    if (initializer && Node.isIdentifier(initializer)) {
      const target = functionDeclarationNamed(file, initializer.getText());
      if (target) {
        isFunction = true;
        value = undefined;
      } else value = resolveConst(file, initializer) as Expression | undefined;
      if (value && (Node.isArrowFunction(value) || Node.isFunctionExpression(value))) isFunction = true;
    }
    return {
      name,
      info: { name, nameSpan: spanOf(nameNode), span: spanOf(property), isFunction },
      value: isFunction ? undefined : value,
    };
  }
  return undefined;
}

function propertyName(node: Node): string {
  if (Node.isStringLiteral(node) || Node.isNoSubstitutionTemplateLiteral(node)) return node.getLiteralValue();
  return node.getText();
}

function functionDeclarationNamed(file: SourceFile, name: string): { name: Node; span: Span } | undefined {
  const declaration = file.getFunction(name);
  const nameNode = declaration?.getNameNode();
  if (declaration && nameNode) return { name: nameNode, span: spanOf(declaration) };
  const variable = file.getVariableDeclaration(name);
  const initializer = unwrap(variable?.getInitializer());
  if (variable && initializer && (Node.isArrowFunction(initializer) || Node.isFunctionExpression(initializer))) {
    return { name: variable.getNameNode(), span: spanOf(variable) };
  }
  return undefined;
}

/** A literal JSON value, or undefined when the expression is not one. */
export function literalValue(node: Node | undefined): { value: unknown } | undefined {
  const bare = unwrap(node);
  if (!bare) return undefined;
  if (Node.isNumericLiteral(bare)) return { value: bare.getLiteralValue() };
  if (Node.isStringLiteral(bare) || Node.isNoSubstitutionTemplateLiteral(bare))
    return { value: bare.getLiteralValue() };
  if (Node.isPrefixUnaryExpression(bare) && bare.getOperatorToken() === SyntaxKind.MinusToken) {
    const inner = literalValue(bare.getOperand());
    return inner && typeof inner.value === 'number' ? { value: -inner.value } : undefined;
  }
  if (bare.getKind() === SyntaxKind.TrueKeyword) return { value: true };
  if (bare.getKind() === SyntaxKind.FalseKeyword) return { value: false };
  if (bare.getKind() === SyntaxKind.NullKeyword) return { value: null };
  if (Node.isArrayLiteralExpression(bare)) {
    const items: unknown[] = [];
    for (const element of bare.getElements()) {
      const item = literalValue(element);
      if (!item) return undefined;
      items.push(item.value);
    }
    return { value: items };
  }
  if (Node.isObjectLiteralExpression(bare)) {
    const out: Record<string, unknown> = {};
    for (const property of bare.getProperties()) {
      if (!Node.isPropertyAssignment(property)) return undefined;
      const item = literalValue(property.getInitializer());
      if (!item) return undefined;
      out[propertyName(property.getNameNode())] = item.value;
    }
    return { value: out };
  }
  return undefined;
}

function readField(name: string, node: Expression, member: TypeScriptMember, reading: TypeScriptReading): void {
  const literal = literalValue(node);
  if (!literal) {
    reading.dynamicFields.add(name);
    return;
  }
  const problems = applyField(reading.spec, name, literal.value, spanOf(node), member.span);
  for (const message of problems) reading.findings.push(schemaFinding(message, spanOf(node)));
}

/**
 * Checks one field's value and writes it into the spec; returns what is wrong with it. Used for
 * literals read from the source and for values read from the running code alike.
 */
export function applyField(
  spec: ParsedSpec,
  name: string,
  value: unknown,
  valueSpan: Span,
  memberSpan: Span,
): string[] {
  switch (name) {
    case 'name':
      if (typeof value !== 'string') return [`name must be a string, not ${describe(value)}`];
      spec.name = { value, span: valueSpan };
      return [];
    case 'objective':
      if (value !== 'maximize' && value !== 'minimize')
        return [`objective must be "maximize" or "minimize", not ${describe(value)}`];
      spec.objective = value as Objective;
      spec.objectiveSpan = valueSpan;
      return [];
    case 'discount':
      if (typeof value !== 'number' || !(value >= 0 && value <= 1))
        return [`discount must be a number between 0 and 1, not ${describe(value)}`];
      spec.discount = { value, span: valueSpan };
      return [];
    case 'horizon':
      if (value === undefined) return [];
      if (typeof value !== 'number' || !Number.isInteger(value) || value < 1)
        return [`horizon must be a whole number of steps of at least 1, not ${describe(value)}`];
      spec.horizon = { value, span: valueSpan };
      return [];
    case 'rewardTerms':
      return applyRewardTerms(spec, value, valueSpan);
    case 'start':
      try {
        spec.start = [{ state: canonicalKey(value, 'start'), probability: 1, span: valueSpan }];
        spec.startSpan = memberSpan;
        return [];
      } catch (error) {
        return [error instanceof Error ? error.message : String(error)];
      }
    case 'startDistribution':
      return applyStartDistribution(spec, value, valueSpan, memberSpan);
    default:
      return [];
  }
}

function applyRewardTerms(spec: ParsedSpec, value: unknown, span: Span): string[] {
  if (typeof value !== 'object' || value === null || Array.isArray(value))
    return [`rewardTerms must be an object of term declarations, not ${describe(value)}`];
  const problems: string[] = [];
  const terms: RewardTermSpec[] = [];
  for (const [name, declaration] of Object.entries(value as Record<string, unknown>)) {
    const d = declaration as { direction?: unknown; shaping?: unknown };
    if (typeof d !== 'object' || d === null || !['bonus', 'penalty', 'either'].includes(String(d.direction))) {
      problems.push(`rewardTerms.${name} needs a direction: "bonus", "penalty" or "either"`);
      continue;
    }
    if (d.shaping !== undefined && typeof d.shaping !== 'boolean')
      problems.push(`rewardTerms.${name}.shaping must be true or false`);
    terms.push({ name, direction: d.direction as TermDirection, shaping: d.shaping === true, span });
  }
  spec.rewardTerms = terms;
  spec.rewardTermsSpan = span;
  return problems;
}

function applyStartDistribution(spec: ParsedSpec, value: unknown, span: Span, memberSpan: Span): string[] {
  if (!Array.isArray(value) || value.length === 0)
    return [`startDistribution must be a non-empty array of { state, probability }, not ${describe(value)}`];
  const entries: ParsedSpec['start'] = [];
  let sum = 0;
  for (const [i, item] of value.entries()) {
    const entry = item as { state?: unknown; probability?: unknown };
    if (
      typeof entry !== 'object' ||
      entry === null ||
      typeof entry.probability !== 'number' ||
      !(entry.probability >= 0 && entry.probability <= 1)
    ) {
      return [`startDistribution[${i}] needs a state and a probability between 0 and 1`];
    }
    try {
      entries.push({
        state: canonicalKey(entry.state, `startDistribution[${i}].state`),
        probability: entry.probability,
        span,
      });
    } catch (error) {
      return [error instanceof Error ? error.message : String(error)];
    }
    sum += entry.probability;
  }
  if (Math.abs(sum - 1) > 1e-9) return [`the startDistribution probabilities add up to ${sum}, not 1`];
  spec.start = entries;
  spec.startSpan = memberSpan;
  return [];
}

function describe(value: unknown): string {
  if (value === undefined) return 'undefined';
  const text = JSON.stringify(value) ?? String(value);
  return text.length > 60 ? `${text.slice(0, 59)}…` : text;
}

/**
 * Places in the source that read an unseeded random source or the clock: Math.random, Date.now,
 * performance.now, crypto.* random functions (global or imported from "crypto"), and `new Date()`.
 */
/** Literals kept per spec for the editor: a spec names its states a handful of times, and a data table of thousands is not state names. */
export const STATE_LITERAL_CAP = 5000;

/**
 * String and number literals (a negative number with its minus sign) with the key a state of that
 * value gets: the JSON text of the value, which is what `keyOfState` gives a string or number state
 * and a `stateKey` that returns one.
 */
function stateLiterals(file: SourceFile): Array<{ key: string; span: Span }> {
  const literals: Array<{ key: string; span: Span }> = [];
  file.forEachDescendant((node, traversal) => {
    if (literals.length >= STATE_LITERAL_CAP) {
      traversal.stop();
      return;
    }
    if (Node.isImportDeclaration(node) || Node.isExportDeclaration(node)) {
      traversal.skip();
      return;
    }
    if (Node.isStringLiteral(node) || Node.isNoSubstitutionTemplateLiteral(node)) {
      if (Node.isCallExpression(node.getParent()) && node.getParent()!.getText().startsWith('require(')) return;
      literals.push({ key: JSON.stringify(node.getLiteralValue()), span: spanOf(node) });
    } else if (Node.isNumericLiteral(node)) {
      const parent = node.getParent();
      const negated =
        parent && Node.isPrefixUnaryExpression(parent) && parent.getOperatorToken() === SyntaxKind.MinusToken;
      const value = negated ? -node.getLiteralValue() : node.getLiteralValue();
      if (Number.isFinite(value)) literals.push({ key: JSON.stringify(value), span: spanOf(negated ? parent : node) });
    }
  });
  return literals;
}

function findRandomness(file: SourceFile): RandomnessSite[] {
  const sites: RandomnessSite[] = [];
  const importedCrypto = new Map<string, string>();
  for (const declaration of file.getImportDeclarations()) {
    const from = declaration.getModuleSpecifierValue();
    if (from !== 'crypto' && from !== 'node:crypto') continue;
    const namespace = declaration.getNamespaceImport() ?? declaration.getDefaultImport();
    if (namespace) importedCrypto.set(namespace.getText(), '*');
    for (const named of declaration.getNamedImports()) {
      if (RANDOM_MEMBERS.crypto.has(named.getName()))
        importedCrypto.set((named.getAliasNode() ?? named.getNameNode()).getText(), named.getName());
    }
  }
  file.forEachDescendant((node) => {
    if (Node.isPropertyAccessExpression(node)) {
      const owner = node.getExpression();
      const member = node.getName();
      const ownerName = Node.isIdentifier(owner)
        ? owner.getText()
        : Node.isPropertyAccessExpression(owner) &&
            ['globalThis', 'window', 'self'].includes(owner.getExpression().getText())
          ? owner.getName()
          : undefined;
      if (!ownerName) return;
      const known =
        RANDOM_MEMBERS[ownerName] ?? (importedCrypto.get(ownerName) === '*' ? RANDOM_MEMBERS.crypto : undefined);
      if (known?.has(member))
        sites.push({ api: `${RANDOM_MEMBERS[ownerName] ? ownerName : 'crypto'}.${member}`, span: spanOf(node) });
    } else if (Node.isNewExpression(node)) {
      if (node.getExpression().getText() === 'Date' && node.getArguments().length === 0)
        sites.push({ api: 'new Date()', span: spanOf(node) });
    } else if (Node.isCallExpression(node)) {
      const callee = node.getExpression();
      if (Node.isIdentifier(callee)) {
        const original = importedCrypto.get(callee.getText());
        if (original && original !== '*') sites.push({ api: `crypto.${original}`, span: spanOf(callee) });
      }
    }
  });
  return sites;
}
