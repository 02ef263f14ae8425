import { z } from 'zod';

// zod probes `new Function` to compile faster parsers; the page's Content-Security-Policy forbids eval, and the
// probe alone would show up as a violation: tell zod up front to parse without it
z.config({ jitless: true });
