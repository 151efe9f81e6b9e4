// A small schema language for the pipeline file: validates a parsed value, fills defaults, and
// collects every problem (path, expected, got, suggestion) instead of stopping at the first.
import { closest } from "../lib/did-you-mean.js";

export type Path = (string | number)[];

export interface Issue {
  path: Path;
  message: string;
  /** For unknown keys: the key itself is at fault (point at the key, not its value). */
  atKey?: boolean;
}

export interface Schema<T = unknown> {
  /** Human description of what is expected, used in messages ("a number ≥ 0"). */
  describe: string;
  /** Checks `value`; returns the resolved value (defaults filled in) and pushes issues. */
  check(value: unknown, path: Path, issues: Issue[]): T;
}

export type Infer<S> = S extends Schema<infer T> ? T : never;

function typeName(v: unknown): string {
  if (v === null) return "null";
  if (Array.isArray(v)) return "a list";
  if (typeof v === "object") return "a mapping";
  if (typeof v === "string") return `"${v.length > 40 ? v.slice(0, 40) + "…" : v}"`;
  return `${typeof v} ${String(v)}`;
}

function fail(issues: Issue[], path: Path, expected: string, got: unknown): void {
  issues.push({ path, message: `expected ${expected}, got ${typeName(got)}` });
}

export function str<const T extends string = string>(opts: { oneOf?: readonly T[]; nonEmpty?: boolean } = {}): Schema<T> {
  const describe = opts.oneOf ? `one of ${opts.oneOf.join(" | ")}` : "a string";
  return {
    describe,
    check(value, path, issues) {
      if (typeof value !== "string") {
        fail(issues, path, describe, value);
        return "" as T;
      }
      if (opts.oneOf && !opts.oneOf.includes(value as T)) {
        const near = closest(value, opts.oneOf);
        issues.push({ path, message: `expected ${describe}, got "${value}"${near ? ` (did you mean "${near}"?)` : ""}` });
      } else if (opts.nonEmpty && value.length === 0) {
        fail(issues, path, "a non-empty string", value);
      }
      return value as T;
    },
  };
}

export function num(opts: { min?: number; max?: number; integer?: boolean; exclusiveMin?: boolean } = {}): Schema<number> {
  const kind = opts.integer ? "an integer" : "a number";
  const describe =
    opts.min !== undefined && opts.max !== undefined && !opts.exclusiveMin
      ? `${kind} from ${opts.min} to ${opts.max}`
      : [kind, opts.min !== undefined ? `${opts.exclusiveMin ? ">" : "≥"} ${opts.min}` : "", opts.max !== undefined ? `≤ ${opts.max}` : ""].filter(Boolean).join(" ");
  return {
    describe,
    check(value, path, issues) {
      const ok =
        typeof value === "number" &&
        Number.isFinite(value) &&
        (!opts.integer || Number.isInteger(value)) &&
        (opts.min === undefined || (opts.exclusiveMin ? value > opts.min : value >= opts.min)) &&
        (opts.max === undefined || value <= opts.max);
      if (!ok) fail(issues, path, describe, value);
      return value as number;
    },
  };
}

export function bool(): Schema<boolean> {
  return {
    describe: "true or false",
    check(value, path, issues) {
      if (typeof value !== "boolean") fail(issues, path, "true or false", value);
      return value as boolean;
    },
  };
}

export function literal<V extends string | number>(v: V): Schema<V> {
  return {
    describe: JSON.stringify(v),
    check(value, path, issues) {
      if (value !== v) fail(issues, path, JSON.stringify(v), value);
      return v;
    },
  };
}

export function list<T>(item: Schema<T>, opts: { nonEmpty?: boolean; orSingle?: boolean } = {}): Schema<T[]> {
  const describe = `a list of ${item.describe}`;
  return {
    describe,
    check(value, path, issues) {
      if (opts.orSingle && !Array.isArray(value)) value = [value];
      if (!Array.isArray(value)) {
        fail(issues, path, describe, value);
        return [];
      }
      if (opts.nonEmpty && value.length === 0) issues.push({ path, message: `expected a non-empty list` });
      return value.map((v, i) => item.check(v, [...path, i], issues));
    },
  };
}

interface Field<T> {
  schema: Schema<T>;
  required?: boolean;
  default?: T;
}

export function field<T>(schema: Schema<T>, opts: { required?: boolean; default?: T } = {}): Field<T> {
  return { schema, ...opts };
}

type Resolved<F> = { [K in keyof F]: F[K] extends Field<infer T> ? T : never };

/** A mapping with known keys; unknown keys are errors with a "did you mean". Defaults are filled in. */
export function obj<F extends Record<string, Field<any>>>(fields: F, describe = "a mapping"): Schema<Resolved<F>> {
  const names = Object.keys(fields);
  return {
    describe,
    check(value, path, issues) {
      const out: Record<string, unknown> = {};
      if (value === null || value === undefined) value = {};
      if (typeof value !== "object" || Array.isArray(value)) {
        fail(issues, path, describe, value);
        return out as Resolved<F>;
      }
      const given = value as Record<string, unknown>;
      for (const key of Object.keys(given)) {
        if (!(key in fields)) {
          const near = closest(key, names);
          issues.push({
            path: [...path, key],
            atKey: true,
            message: `unknown key "${key}"${near ? ` (did you mean "${near}"?)` : ""}; allowed: ${names.join(", ")}`,
          });
        }
      }
      for (const name of names) {
        const f = fields[name];
        if (given[name] === undefined) {
          if (f.required) issues.push({ path: [...path, name], message: `missing required key "${name}" (${f.schema.describe})` });
          else if (f.default !== undefined) out[name] = structuredClone(f.default);
          continue;
        }
        out[name] = f.schema.check(given[name], [...path, name], issues);
      }
      return out as Resolved<F>;
    },
  };
}

/** Custom cross-field rule after a schema has passed its own checks. */
export function refine<T>(schema: Schema<T>, rule: (value: T, path: Path, issues: Issue[]) => void): Schema<T> {
  return {
    describe: schema.describe,
    check(value, path, issues) {
      const before = issues.length;
      const out = schema.check(value, path, issues);
      if (issues.length === before) rule(out, path, issues);
      return out;
    },
  };
}
