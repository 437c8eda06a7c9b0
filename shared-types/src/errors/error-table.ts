import { ERROR_CATALOGUE, type ErrorCode } from './error-catalogue.js';

/** Where the page lives, from the repository root. */
export const ERROR_CODES_DOC_PATH = 'docs/error-codes.md';

const DOC_HEADER = `# Error codes

Generated from \`shared-types/src/errors/error-catalogue.ts\` by \`npm run docs:errors\`; do not edit
by hand (\`shared-types/src/errors/error-table.test.ts\` fails when this page and the catalogue differ).

Every error netbreeder raises on purpose carries one of these codes (\`NetbreederError.code\`). The
coordinator's HTTP API answers \`{ "error": { "code", "message", "fix" } }\` with the codes that have
a status; the others are raised in a process (the command line, a worker, the training child) and
printed or logged with their message. *Retryable*: trying again unchanged, later or on another
worker, may succeed (a worker gives up at once on a job that fails with a code that is not).

`;

/** One table row for `code`: code | HTTP status | retryable | how to fix. */
const row = (code: ErrorCode): string => {
  const e = ERROR_CATALOGUE[code];
  return `| ${code} | ${e.status ?? '–'} | ${e.retryable ? 'yes' : 'no'} | ${e.fix.replaceAll('|', '\\|')} |`;
};

/** The whole docs/error-codes.md page: the catalogue as a Markdown table, in catalogue order. */
export function renderErrorCodesPage(): string {
  const codes = Object.keys(ERROR_CATALOGUE) as ErrorCode[];
  return `${DOC_HEADER}| code | HTTP status | retryable | how to fix |\n|---|---|---|---|\n${codes.map(row).join('\n')}\n`;
}
