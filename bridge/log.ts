import { isoWithOffset } from './local-time';

/** One line per notable thing, prefixed with local time and level. */
export interface Log {
  info(message: string): void;
  warn(message: string): void;
  error(message: string): void;
}

export function createLog(write: (line: string) => void, now: () => Date = () => new Date()): Log {
  const line = (level: string) => (message: string) => write(`${isoWithOffset(now())} ${level} ${message}\n`);
  return { info: line('info '), warn: line('warn '), error: line('error') };
}

export const streamLog = (stream: NodeJS.WritableStream): Log => createLog((line) => stream.write(line));

export const silentLog: Log = { info() {}, warn() {}, error() {} };

export function errorMessage(error: unknown): string {
  if (error instanceof Error) {
    const code = (error as NodeJS.ErrnoException).code;
    const cause = error.cause instanceof Error ? ` (${errorMessage(error.cause)})` : '';
    return `${code && !error.message.includes(code) ? `${code} ` : ''}${error.message}${cause}`;
  }
  return String(error);
}
