/**
 * A small expression language for the per-customer feature formulas of ./definitions.ts. The
 * formulas are data, so that one definition feeds both the app's own computation (compiled here
 * to a JavaScript function) and the SQL that src/warehouse generates for a chain's own engine.
 *
 * Every value is a double; a missing value is NaN in JavaScript and NULL in SQL. Formulas compare
 * a possibly missing value only through `orElse`, so both renderings take the same branches.
 */

export type ArithmeticOperator = '+' | '-' | '*' | '/';
export type ComparisonOperator = '<' | '<=' | '>' | '>=';

export type Expression =
  /** A named input (an aggregate, a window constant, a setting) or an earlier derived value. */
  | { kind: 'value'; name: string }
  | { kind: 'number'; value: number }
  | { kind: 'missing' }
  | { kind: 'arithmetic'; operator: ArithmeticOperator; left: Expression; right: Expression }
  | { kind: 'negate'; operand: Expression }
  /** The larger / smaller of two values that are never missing. */
  | { kind: 'larger' | 'smaller'; left: Expression; right: Expression }
  /** `value`, or `fallback` where `value` is missing. */
  | { kind: 'orElse'; value: Expression; fallback: Expression }
  | { kind: 'choose'; test: Condition; then: Expression; otherwise: Expression };

export type Condition =
  | { kind: 'compare'; operator: ComparisonOperator; left: Expression; right: Expression }
  | { kind: 'all' | 'any'; conditions: Condition[] };

export const value = (name: string): Expression => ({ kind: 'value', name });
export const constant = (number: number): Expression => ({ kind: 'number', value: number });
export const missing: Expression = { kind: 'missing' };
const arithmetic = (operator: ArithmeticOperator) => (left: Expression, right: Expression): Expression => ({ kind: 'arithmetic', operator, left, right });
export const plus = arithmetic('+');
export const minus = arithmetic('-');
export const times = arithmetic('*');
export const dividedBy = arithmetic('/');
export const negated = (operand: Expression): Expression => ({ kind: 'negate', operand });
export const larger = (left: Expression, right: Expression): Expression => ({ kind: 'larger', left, right });
export const smaller = (left: Expression, right: Expression): Expression => ({ kind: 'smaller', left, right });
export const orElse = (expression: Expression, fallback: Expression): Expression => ({ kind: 'orElse', value: expression, fallback });
export const choose = (test: Condition, then: Expression, otherwise: Expression): Expression => ({ kind: 'choose', test, then, otherwise });
const compare = (operator: ComparisonOperator) => (left: Expression, right: Expression): Condition => ({ kind: 'compare', operator, left, right });
export const below = compare('<');
export const atMost = compare('<=');
export const above = compare('>');
export const atLeast = compare('>=');
export const allOf = (...conditions: Condition[]): Condition => ({ kind: 'all', conditions });
export const anyOf = (...conditions: Condition[]): Condition => ({ kind: 'any', conditions });

function children(node: Expression | Condition): (Expression | Condition)[] {
  switch (node.kind) {
    case 'value':
    case 'number':
    case 'missing':
      return [];
    case 'negate':
      return [node.operand];
    case 'orElse':
      return [node.value, node.fallback];
    case 'choose':
      return [node.test, node.then, node.otherwise];
    case 'all':
    case 'any':
      return node.conditions;
    default:
      return [node.left, node.right];
  }
}

/** The names an expression reads, in first-use order. */
export function namesRead(node: Expression | Condition, into: string[] = []): string[] {
  if (node.kind === 'value' && !into.includes(node.name)) into.push(node.name);
  for (const child of children(node)) namesRead(child, into);
  return into;
}

/**
 * How a renderer writes the leaves and the few operations whose spelling differs; the tree walk
 * and the parenthesisation (which fixes the order of floating-point operations) are shared.
 */
export interface ExpressionSyntax {
  name: (name: string) => string;
  number: (value: number) => string;
  missing: string;
  orElse: (value: string, fallback: string) => string;
  choose: (test: string, then: string, otherwise: string) => string;
  and: string;
  or: string;
}

/** Renders an expression fully parenthesised, so every engine performs the same operations in the same order. */
export function renderExpression(expression: Expression, syntax: ExpressionSyntax): string {
  const render = (node: Expression): string => renderExpression(node, syntax);
  switch (expression.kind) {
    case 'value':
      return syntax.name(expression.name);
    case 'number':
      return syntax.number(expression.value);
    case 'missing':
      return syntax.missing;
    case 'arithmetic':
      return `(${render(expression.left)} ${expression.operator} ${render(expression.right)})`;
    case 'negate':
      return `(-${render(expression.operand)})`;
    case 'larger':
    case 'smaller': {
      const left = render(expression.left);
      const right = render(expression.right);
      return syntax.choose(`${left} ${expression.kind === 'larger' ? '>=' : '<='} ${right}`, left, right);
    }
    case 'orElse':
      return syntax.orElse(render(expression.value), render(expression.fallback));
    case 'choose':
      return syntax.choose(renderCondition(expression.test, syntax), render(expression.then), render(expression.otherwise));
  }
}

export function renderCondition(condition: Condition, syntax: ExpressionSyntax): string {
  if (condition.kind === 'compare') {
    return `${renderExpression(condition.left, syntax)} ${condition.operator} ${renderExpression(condition.right, syntax)}`;
  }
  const joiner = condition.kind === 'all' ? syntax.and : syntax.or;
  return `(${condition.conditions.map((part) => `(${renderCondition(part, syntax)})`).join(` ${joiner} `)})`;
}

/** JavaScript spelling: values are locals, missing is NaN (tested with x !== x). */
export const javaScriptSyntax: ExpressionSyntax = {
  name: (name) => name,
  number: (number) => (Object.is(number, -0) ? '-0' : String(number)),
  missing: 'NaN',
  orElse: (value, fallback) => `(${value} !== ${value} ? ${fallback} : ${value})`,
  choose: (test, then, otherwise) => `(${test} ? ${then} : ${otherwise})`,
  and: '&&',
  or: '||',
};
