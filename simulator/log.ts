/** The simulator's log lines: one line each, ISO time first, to stdout/stderr. */
export interface SimLogger {
  info(message: string): void;
  warn(message: string): void;
  error(message: string): void;
}

/** A logger writing "time level message" lines to the console. */
export function consoleLogger(): SimLogger {
  const line = (level: string, message: string) => `${new Date().toISOString()} ${level} ${message}`;
  return {
    info: (m) => console.log(line('info', m)),
    warn: (m) => console.warn(line('warn', m)),
    error: (m) => console.error(line('error', m)),
  };
}

/** A logger that keeps lines in memory (tests) instead of printing them. */
export function memoryLogger(): SimLogger & { lines: string[] } {
  const lines: string[] = [];
  return {
    lines,
    info: (m) => lines.push(`info ${m}`),
    warn: (m) => lines.push(`warn ${m}`),
    error: (m) => lines.push(`error ${m}`),
  };
}
