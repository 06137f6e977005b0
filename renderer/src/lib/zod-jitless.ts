/**
 * Imported first by each renderer entry (the page and the engine worker), before any schema is built.
 *
 * zod 4 compiles object parsers with `new Function` when it may, and finds out whether it may by trying
 * `new Function('')` once. Under the app's Content-Security-Policy (`script-src 'self'`, no
 * 'unsafe-eval', main/security.ts) that try is refused, and although zod catches the EvalError, the
 * browser still reports a `securitypolicyviolation`. With `jitless` zod skips both the probe and the
 * compiled parsers (zod's own note at `allowsEval` in v4/core/util.js), so the app runs with no CSP
 * violations at all. Parsing our small records and run states is no slower in any way that matters.
 */
import { z } from 'zod';

z.config({ jitless: true });
