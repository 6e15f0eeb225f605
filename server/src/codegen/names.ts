/**
 * Identifier sanitising for the code generators: a loss name from a `.loss` file becomes a legal, non-
 * shadowing identifier in Python or TypeScript. Keywords (`lambda`, `def`, `class`, `in`, `function`),
 * built-ins the generated code relies on (`sum`, `abs`, `min`, `max`, `exp`, `Math`) and the names the
 * emitted modules use themselves (`np`, `torch`, `pred`, `EPS`, …) all get a trailing underscore.
 */

export type NameLanguage = "python" | "ts";

/** Python 3.11 keywords and soft keywords (`keyword.kwlist` + `keyword.softkwlist`). */
const PYTHON_KEYWORDS = new Set([
  "False", "None", "True", "and", "as", "assert", "async", "await", "break", "class", "continue", "def", "del",
  "elif", "else", "except", "finally", "for", "from", "global", "if", "import", "in", "is", "lambda", "nonlocal",
  "not", "or", "pass", "raise", "return", "try", "while", "with", "yield", "match", "case", "type", "_",
]);

/** Python built-ins a generated module could shadow to its own or its user's surprise (common practice: never rebind them). */
const PYTHON_BUILTINS = new Set([
  "abs", "all", "any", "bool", "dict", "dir", "divmod", "enumerate", "eval", "exec", "exp", "filter", "float", "format",
  "hash", "id", "input", "int", "isinstance", "iter", "len", "list", "log", "map", "max", "min", "next", "object",
  "open", "pow", "print", "range", "repr", "round", "set", "slice", "sorted", "str", "sum", "super", "tuple", "type",
  "vars", "zip", "__import__", "compile", "globals", "locals", "getattr", "setattr", "callable", "complex", "bytes",
]);

/** Names the Python emitters define or import at module level, or use as parameters. */
const PYTHON_RESERVED = new Set([
  "np", "numpy", "torch", "F", "jax", "jnp", "math", "statistics", "EPS", "pred", "target", "weight", "reduction",
  "loss", "grad", "q", "v", "y", "raw", "inv", "u",
  // The module's own helpers (emit-python-common.ts, emit-numpy.ts): a loss of that name would replace them.
  "_reduce", "_reduce_grad", "_sigmoid", "_erf", "_erfc", "_erfcx", "_normcdf", "_lognormcdf", "_probit", "_as_float", "_eps", "_erf_small", "_exp_neg_sq",
  "_CODY_A", "_CODY_B", "_CODY_C", "_CODY_D", "_CODY_P", "_CODY_Q",
]);

/** ECMAScript reserved words, strict-mode reserved words and TypeScript's contextual type keywords. */
const TS_KEYWORDS = new Set([
  "break", "case", "catch", "class", "const", "continue", "debugger", "default", "delete", "do", "else", "enum",
  "export", "extends", "false", "finally", "for", "function", "if", "import", "in", "instanceof", "new", "null",
  "return", "super", "switch", "this", "throw", "true", "try", "typeof", "var", "void", "while", "with", "yield",
  "let", "static", "implements", "interface", "package", "private", "protected", "public", "await", "async",
  "any", "boolean", "number", "string", "symbol", "never", "unknown", "object", "type", "declare", "namespace",
  "module", "abstract", "as", "is", "keyof", "readonly", "require", "of", "get", "set",
]);

/** Globals a TypeScript module must not shadow. */
const TS_GLOBALS = new Set([
  "Math", "Number", "Array", "Object", "String", "Boolean", "Symbol", "Error", "JSON", "Float64Array", "ArrayLike",
  "undefined", "NaN", "Infinity", "eval", "arguments", "globalThis", "console", "isFinite", "isNaN", "parseFloat",
  "parseInt", "Date", "Promise", "Map", "Set",
]);

/** Names the TypeScript emitter defines or uses as parameters. */
const TS_RESERVED = new Set([
  "EPS", "pred", "target", "options", "weight", "reduction", "LossOptions", "Reduction", "softplus", "sigmoid",
  "logaddexp", "erf", "erfc", "normcdf", "probit", "reduce", "q", "v", "y", "out", "n", "i", "raw",
  // The module's own helpers (emit-ts.ts): a loss of that name would be a duplicate declaration.
  "checkLengths", "scaleGrad", "logErfc", "lognormcdf",
]);

/** Turns arbitrary text into `[A-Za-z_][A-Za-z0-9_]*` (the `.loss` grammar already does; this is defence in depth). */
function toIdentifierChars(raw: string): string {
  let s = raw.replace(/[^A-Za-z0-9_]/g, "_");
  if (s === "" || /^[0-9]/.test(s)) s = "_" + s;
  return s;
}

/** `__name__`-style names (a trailing `_` added by sanitiseName takes a name out of this shape). */
const DUNDER = /^__[A-Za-z0-9]+(?:_[A-Za-z0-9]+)*__$/;

/** True when `name` would clash with a keyword, a built-in or a name of the generated module. */
export function isReservedName(name: string, lang: NameLanguage): boolean {
  // Dunder names (`__import__`, `__name__`, …) are Python's own; a module must not define them as losses.
  if (lang === "python") return PYTHON_KEYWORDS.has(name) || PYTHON_BUILTINS.has(name) || PYTHON_RESERVED.has(name) || DUNDER.test(name);
  return TS_KEYWORDS.has(name) || TS_GLOBALS.has(name) || TS_RESERVED.has(name);
}

/** A legal, non-shadowing identifier for `raw` in the given language (a trailing `_` resolves clashes). */
export function sanitiseName(raw: string, lang: NameLanguage): string {
  let s = toIdentifierChars(raw);
  while (isReservedName(s, lang)) s += "_";
  return s;
}

/** snake_case → camelCase for TypeScript function names (`log_loss` → `logLoss`), then sanitised. */
export function tsFunctionName(raw: string, suffix = ""): string {
  const parts = toIdentifierChars(raw).split("_");
  const lead = parts.findIndex((p) => p !== "");
  let s: string;
  if (lead < 0) {
    s = "_";
  } else {
    // Leading underscores are kept: they are part of the user's name.
    s = "_".repeat(lead) + parts[lead]! + parts.slice(lead + 1).filter((p) => p !== "").map((p) => p[0]!.toUpperCase() + p.slice(1)).join("");
  }
  if (/^[0-9]/.test(s)) s = "_" + s;
  return sanitiseName(s + suffix, "ts");
}

/**
 * Gives every name a distinct identifier (a second loss that sanitises to the same text gets `_2`, `_3`, …),
 * in input order.
 */
export function uniqueNames(raw: string[], make: (name: string) => string, lang: NameLanguage): string[] {
  const used = new Set<string>();
  return raw.map((r) => {
    const base = make(r);
    let s = base;
    for (let k = 2; used.has(s) || isReservedName(s, lang); k++) s = `${base}_${k}`;
    used.add(s);
    return s;
  });
}

/**
 * Text that is safe inside a one-line comment or string of the generated code: every line terminator of
 * Python or ECMAScript (\n, \r, U+2028, U+2029; Python's str.splitlines also breaks at \v, \f, \x1c–\x1e
 * and \x85) and every other control character becomes a visible `\uXXXX` escape, so a file name cannot
 * end a comment and inject code.
 */
export function commentSafe(text: string): string {
  return text.replace(/[\u0000-\u001f\u007f-\u009f\u2028\u2029]/g, (c) => `\\u${c.charCodeAt(0).toString(16).padStart(4, "0")}`);
}
