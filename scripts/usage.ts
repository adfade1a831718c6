/**
 * The command line's argument model: each verb declares its positional arguments and options
 * (`VerbSpec`), `parseVerbArgs` checks argv against it, and every mistake is a `UsageError`
 * (printed on stderr with the verb's usage, exit code 2). Light on purpose: `--help` and
 * `--version` load nothing else.
 */

export interface CliArgs {
  positional: string[];
  flags: Record<string, string | boolean>;
}

/** A mistake in how the command was called (exit code 2). */
export class UsageError extends Error {}

export function usage(message: string): never {
  throw new UsageError(message);
}

export interface OptionSpec {
  /** Without the leading `--`. */
  name: string;
  /** Placeholder of the value (`<dir>`), or null for a switch that takes none. */
  value: string | null;
  help: string;
}

export interface VerbSpec {
  name: string;
  /** One sentence: what the verb does. */
  summary: string;
  /** Usage lines without the program name, e.g. `check <bundle-folder>`. */
  usage: string[];
  /** The fewest and most positional arguments after the verb. */
  positional: [min: number, max: number];
  /** Named in usage errors for a missing positional argument. */
  positionalNames: string[];
  options: OptionSpec[];
  /** More lines for `--help`: defaults, exit codes, where to read more. */
  notes?: string[];
}

export const HELP_OPTION: OptionSpec = { name: 'help', value: null, help: 'show this help and exit (also -h)' };

/**
 * Checks argv (after the verb) against the verb's spec. Options are `--name value`,
 * `--name=value` or a bare `--name` for switches; anything else starting with `-` is unknown.
 */
export function parseVerbArgs(spec: VerbSpec, argv: string[]): CliArgs {
  const positional: string[] = [];
  const flags: Record<string, string | boolean> = {};
  const known = new Map(spec.options.map((o) => [o.name, o]));
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i]!;
    if (a === '--') {
      positional.push(...argv.slice(i + 1));
      break;
    }
    if (a.startsWith('--')) {
      const eq = a.indexOf('=');
      const name = eq < 0 ? a.slice(2) : a.slice(2, eq);
      const opt = known.get(name);
      if (!opt) usage(`unknown option --${name}`);
      if (name in flags) usage(`--${name} is given twice`);
      if (opt.value === null) {
        if (eq >= 0) usage(`--${name} takes no value`);
        flags[name] = true;
      } else if (eq >= 0) {
        flags[name] = a.slice(eq + 1);
      } else {
        const next = argv[i + 1];
        if (next === undefined || next.startsWith('--')) usage(`--${name} needs a value (${opt.value})`);
        flags[name] = next;
        i++;
      }
      continue;
    }
    if (a.startsWith('-') && a !== '-') usage(`unknown option ${a}`);
    positional.push(a);
  }
  const [min, max] = spec.positional;
  if (positional.length < min) usage(`missing ${spec.positionalNames[positional.length] ?? 'argument'}`);
  if (positional.length > max) usage(`unexpected argument ${JSON.stringify(positional[max])}`);
  return { positional: [spec.name, ...positional], flags };
}

/** A string option, or undefined; an empty value is a usage error. */
export function stringFlag(args: CliArgs, name: string): string | undefined {
  const v = args.flags[name];
  if (v === undefined) return undefined;
  if (typeof v !== 'string' || v === '') usage(`--${name} needs a value`);
  return v;
}

/** A whole-number option; `min` (and `max`) bound it. */
export function intFlag(args: CliArgs, name: string, min: number, max = Number.MAX_SAFE_INTEGER): number | undefined {
  const v = stringFlag(args, name);
  if (v === undefined) return undefined;
  if (!/^\d+$/.test(v) || Number(v) < min || Number(v) > max) usage(`--${name} expects a whole number ${max < Number.MAX_SAFE_INTEGER ? `from ${min} to ${max}` : `of at least ${min}`}, got "${v}"`);
  return Number(v);
}

/** `usage: posterity ...` lines of one verb (a line starting with a space continues the one before). */
export function usageLines(spec: VerbSpec): string {
  return spec.usage.map((u, i) => (u.startsWith(' ') ? `       ${u}` : `${i === 0 ? 'usage: ' : '       '}posterity ${u}`)).join('\n');
}

/** The whole help text of one verb. */
export function verbHelp(spec: VerbSpec): string {
  const opts = [...spec.options, HELP_OPTION];
  const left = opts.map((o) => `--${o.name}${o.value ? ` ${o.value}` : ''}`);
  const width = Math.max(...left.map((l) => l.length));
  const lines = [usageLines(spec), '', spec.summary, '', 'options:', ...opts.map((o, i) => `  ${left[i]!.padEnd(width)}  ${o.help}`)];
  if (spec.notes?.length) lines.push('', ...spec.notes);
  return lines.join('\n') + '\n';
}
