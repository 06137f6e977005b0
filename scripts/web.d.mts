// Types of the parts of scripts/web.mjs the tests import.
import type { IncomingMessage, ServerResponse } from 'node:http';

export function resolveRequestPath(urlPath: string): string | null;
export function isAllowedHost(host: string | undefined, port: number): boolean;
export function securityHeaders(csp: string): Record<string, string>;
export function createHandler(
  csp: string,
  port: () => number,
  io?: {
    readFile?: (path: string) => Buffer;
    resolvePath?: (urlPath: string) => string | null;
  },
): (req: IncomingMessage, res: ServerResponse) => void;
