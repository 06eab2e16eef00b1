// A reader of Dockerfile instruction lines, enough to check a recipe's properties without a
// Docker engine. It follows the Dockerfile reference's line rules: a line ending in the escape
// character (a backslash; the `escape` parser directive is not read) continues on the next,
// comment lines (a `#` first on the line) are dropped, also inside a continued instruction, and
// parser directives (`# syntax=...`) are comments here. Arguments stay as written, except that
// ENTRYPOINT, CMD and RUN in exec form (a JSON array) are read as that array. Build arguments
// (ARG) and variables are not expanded: a recipe that needs them to be read (ARG, or a variable
// in an instruction whose arguments are checked here) is refused.

export interface Instruction {
  /** upper case: FROM, RUN, COPY, ... */
  keyword: string;
  /** the rest of the line, continuations joined by a space */
  text: string;
  /** the JSON array of an exec form, else null */
  exec: string[] | null;
  /** 1-based line where the instruction starts */
  line: number;
}

export interface Stage {
  /** the image the stage starts FROM */
  base: string;
  /** its AS name, or null */
  name: string | null;
  instructions: Instruction[];
}

const EXEC_FORM_KEYWORDS = new Set(['ENTRYPOINT', 'CMD', 'RUN', 'SHELL']);

/** Instructions whose arguments Docker expands and the checks read (RUN's are the shell's). */
const EXPANDED_KEYWORDS = new Set(['FROM', 'COPY', 'ADD', 'WORKDIR', 'USER', 'ENTRYPOINT']);

function execForm(keyword: string, text: string): string[] | null {
  if (!EXEC_FORM_KEYWORDS.has(keyword) || !text.startsWith('[')) return null;
  try {
    const parsed: unknown = JSON.parse(text);
    if (Array.isArray(parsed) && parsed.every((a) => typeof a === 'string')) return parsed;
  } catch {
    // not valid JSON: Docker runs such a line in shell form, and so it is read here
  }
  return null;
}

/** The instructions of a Dockerfile, in order. */
export function readInstructions(source: string): Instruction[] {
  const out: Instruction[] = [];
  let pending: { parts: string[]; line: number } | null = null;
  source.split(/\r?\n/).forEach((raw, index) => {
    const trimmed = raw.trim();
    if (trimmed.startsWith('#')) return;
    if (pending === null && trimmed === '') return;
    const continues = trimmed.endsWith('\\');
    const part = continues ? trimmed.slice(0, -1).trim() : trimmed;
    pending ??= { parts: [], line: index + 1 };
    if (part !== '') pending.parts.push(part);
    if (continues) return;
    const whole = pending.parts.join(' ');
    const space = whole.search(/\s/);
    const keyword = (space < 0 ? whole : whole.slice(0, space)).toUpperCase();
    const text = space < 0 ? '' : whole.slice(space + 1).trim();
    if (keyword === 'ARG' || (EXPANDED_KEYWORDS.has(keyword) && /\$\{?[A-Za-z_]/.test(text)))
      throw new Error(`line ${pending.line}: ${keyword} ${text}: build arguments are not read`);
    out.push({ keyword, text, exec: execForm(keyword, text), line: pending.line });
    pending = null;
  });
  if (pending !== null) throw new Error('the last instruction continues past the end of the file');
  return out;
}

/** The stages of a Dockerfile: each FROM starts one. */
export function readStages(source: string): Stage[] {
  const stages: Stage[] = [];
  for (const instruction of readInstructions(source)) {
    if (instruction.keyword === 'FROM') {
      const words = instruction.text.split(/\s+/).filter((w) => !w.startsWith('--'));
      const named = words.length === 3 && words[1].toUpperCase() === 'AS';
      if (words.length !== 1 && !named)
        throw new Error(
          `line ${instruction.line}: FROM ${instruction.text}: expected IMAGE [AS NAME]`,
        );
      stages.push({ base: words[0], name: named ? words[2] : null, instructions: [] });
    } else {
      if (stages.length === 0)
        throw new Error(`line ${instruction.line}: ${instruction.keyword} before any FROM`);
      stages[stages.length - 1].instructions.push(instruction);
    }
  }
  return stages;
}

export interface CopyInstruction {
  /** the stage named by --from, or null for the build context */
  from: string | null;
  sources: string[];
  destination: string;
}

/** A COPY's flags, sources and destination (shell form: words split at white space). */
export function readCopy(instruction: Instruction): CopyInstruction {
  const words = instruction.text.split(/\s+/);
  let from: string | null = null;
  while (words.length > 0 && words[0].startsWith('--')) {
    const flag = words.shift()!;
    if (flag.startsWith('--from=')) from = flag.slice('--from='.length);
  }
  if (words.length < 2)
    throw new Error(`line ${instruction.line}: COPY ${instruction.text}: expected SOURCE... DEST`);
  return { from, sources: words.slice(0, -1), destination: words[words.length - 1] };
}
