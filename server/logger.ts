/** Structured JSON logs (pino). Secrets, passwords and cookies are redacted. */
import { pino, type Logger } from 'pino';

export type { Logger };

/** Creates the process logger at the given level. */
export function createLogger(level: string, name = 'rimehold'): Logger {
  return pino({
    name,
    level,
    redact: {
      paths: [
        'password',
        '*.password',
        'deviceSecret',
        '*.deviceSecret',
        'req.headers.cookie',
        'req.headers.authorization',
        'req.headers["x-csrf-token"]',
        'res.headers["set-cookie"]',
      ],
      censor: '[redacted]',
    },
  });
}
