/**
 * Locating things in JSON text for error messages: the position of a syntax error (engines word and place
 * these differently, so it is found by a small validating scanner following RFC 8259), and the position of the
 * value at a JSON path. Only used on error paths and on small documents (run.json).
 */

export interface TextPosition {
  offset: number;
  /** 1-based */
  line: number;
  /** 1-based, in UTF-16 code units */
  column: number;
}

export interface JsonSyntaxProblem extends TextPosition {
  message: string;
}

type PathKey = string | number;

class LocateError extends Error {
  constructor(
    readonly offset: number,
    message: string,
  ) {
    super(message);
  }
}

const MAX_DEPTH = 512;
const NUMBER = /-?(?:0|[1-9]\d*)(?:\.\d+)?(?:[eE][+-]?\d+)?/y;

class Scanner {
  i = 0;
  readonly path: PathKey[] = [];

  constructor(
    private readonly s: string,
    private readonly onValue?: (path: readonly PathKey[], offset: number) => void,
  ) {}

  document(): void {
    this.value(0);
    this.ws();
    if (this.i < this.s.length) this.fail('unexpected content after the JSON value');
  }

  private fail(message: string): never {
    throw new LocateError(this.i, message);
  }

  private ws(): void {
    const s = this.s;
    while (this.i < s.length) {
      const c = s.charCodeAt(this.i);
      if (c !== 32 && c !== 9 && c !== 10 && c !== 13) return;
      this.i++;
    }
  }

  private value(depth: number): void {
    if (depth > MAX_DEPTH) this.fail(`nesting deeper than ${MAX_DEPTH}`);
    this.ws();
    this.onValue?.(this.path, this.i);
    const c = this.s[this.i];
    if (c === undefined) this.fail('unexpected end of input, expected a value');
    if (c === '{') return this.object(depth);
    if (c === '[') return this.array(depth);
    if (c === '"') return void this.string();
    if (c === '-' || (c >= '0' && c <= '9')) return this.number();
    for (const lit of ['true', 'false', 'null']) {
      if (this.s.startsWith(lit, this.i)) {
        this.i += lit.length;
        return;
      }
    }
    this.fail(`unexpected character ${JSON.stringify(c)}, expected a value`);
  }

  private object(depth: number): void {
    this.i++;
    this.ws();
    if (this.s[this.i] === '}') return void this.i++;
    for (;;) {
      this.ws();
      if (this.s[this.i] !== '"') this.fail('expected a property name in double quotes');
      const key = this.string();
      this.ws();
      if (this.s[this.i] !== ':') this.fail('expected ":" after the property name');
      this.i++;
      this.path.push(key);
      this.value(depth + 1);
      this.path.pop();
      this.ws();
      if (this.s[this.i] === ',') this.i++;
      else if (this.s[this.i] === '}') return void this.i++;
      else this.fail('expected "," or "}"');
    }
  }

  private array(depth: number): void {
    this.i++;
    this.ws();
    if (this.s[this.i] === ']') return void this.i++;
    for (let k = 0; ; k++) {
      this.path.push(k);
      this.value(depth + 1);
      this.path.pop();
      this.ws();
      if (this.s[this.i] === ',') this.i++;
      else if (this.s[this.i] === ']') return void this.i++;
      else this.fail('expected "," or "]"');
    }
  }

  private string(): string {
    const start = this.i++;
    const s = this.s;
    for (;;) {
      const c = s.charCodeAt(this.i);
      if (Number.isNaN(c)) this.fail('unterminated string');
      if (c === 34) break;
      if (c < 32) this.fail('control character in string (escape it)');
      if (c === 92) {
        const e = s[this.i + 1];
        if (e === 'u') {
          if (!/^[0-9a-fA-F]{4}$/.test(s.slice(this.i + 2, this.i + 6))) this.fail('invalid \\u escape');
          this.i += 6;
          continue;
        }
        if (e === undefined || !'"\\/bfnrt'.includes(e)) this.fail('invalid escape sequence');
        this.i += 2;
        continue;
      }
      this.i++;
    }
    this.i++;
    return JSON.parse(s.slice(start, this.i)) as string;
  }

  private number(): void {
    NUMBER.lastIndex = this.i;
    const m = NUMBER.exec(this.s);
    if (!m || m[0].length === 0 || m[0] === '-') this.fail('invalid number');
    this.i += m[0].length;
  }
}

export function positionOf(text: string, offset: number): TextPosition {
  let line = 1;
  let lineStart = 0;
  for (let i = 0; i < offset && i < text.length; i++) {
    if (text.charCodeAt(i) === 10) {
      line++;
      lineStart = i + 1;
    }
  }
  return { offset, line, column: offset - lineStart + 1 };
}

/** Finds the first syntax error in `text`, or null when it is well-formed JSON. */
export function locateJsonSyntaxError(text: string): JsonSyntaxProblem | null {
  try {
    new Scanner(text).document();
    return null;
  } catch (err) {
    if (!(err instanceof LocateError)) throw err;
    return { ...positionOf(text, err.offset), message: err.message };
  }
}

/**
 * Position of the value at `path`, or of the deepest existing ancestor when the path does not exist
 * (a missing property is reported at the object that lacks it). Null when `text` is not valid JSON.
 */
export function locateJsonPath(text: string, path: readonly PathKey[]): TextPosition | null {
  let best = -1;
  let bestDepth = -1;
  const scanner = new Scanner(text, (p, offset) => {
    if (p.length <= bestDepth || p.length > path.length) return;
    for (let k = 0; k < p.length; k++) if (p[k] !== path[k]) return;
    best = offset;
    bestDepth = p.length;
  });
  try {
    scanner.document();
  } catch {
    return null;
  }
  return best < 0 ? null : positionOf(text, best);
}
