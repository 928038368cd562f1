/** Structured JSON logs (pino). Secrets, passwords and cookies are redacted. */
import { pino, type DestinationStream, type Logger, type LoggerOptions } from 'pino';

export type { Logger };

/** Creates the process logger at the given level (stdout unless a destination stream is given, e.g. in tests). */
export function createLogger(level: string, name = 'rimehold', destination?: DestinationStream): Logger {
  const options: LoggerOptions = {
    name,
    level,
    redact: {
      paths: [
        'password',
        '*.password',
        'token',
        '*.token',
        'deviceSecret',
        '*.deviceSecret',
        'req.headers.cookie',
        'req.headers.authorization',
        'req.headers["x-csrf-token"]',
        'res.headers["set-cookie"]',
      ],
      censor: '[redacted]',
    },
  };
  return destination ? pino(options, destination) : pino(options);
}

/**
 * The URL as it goes into a log line: the path only, with each query value replaced, so that an
 * invitation's set-password token (or any other secret someone puts in a query) never reaches the logs.
 */
export function loggableUrl(url: string): string {
  const q = url.indexOf('?');
  if (q < 0) return url;
  const names = url
    .slice(q + 1)
    .split('&')
    .filter((pair) => pair !== '')
    .map((pair) => `${pair.split('=')[0]}=[redacted]`);
  return `${url.slice(0, q)}${names.length ? `?${names.join('&')}` : ''}`;
}
