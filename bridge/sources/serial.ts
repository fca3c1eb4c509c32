import { SerialPort, type SerialPortOpenOptions } from 'serialport';
import type { AutoDetectTypes } from '@serialport/bindings-cpp';
import { z } from 'zod';
import type { RetryPolicy } from '../backoff';
import type { Log } from '../log';
import { ReconnectingSource } from './reconnecting';

export const PARITIES = ['none', 'even', 'odd', 'mark', 'space'] as const;

/** Line settings as in the analyzer's manual. */
export const serialSettingsSchema = z.object({
  baudRate: z.number().int().positive().default(9600),
  dataBits: z.union([z.literal(5), z.literal(6), z.literal(7), z.literal(8)]).default(8),
  // mark and space: the Linux and macOS drivers refuse them ("Invalid parity setting"); Windows has them.
  parity: z.enum(PARITIES).default('none'),
  stopBits: z.union([z.literal(1), z.literal(1.5), z.literal(2)]).default(1),
  rtscts: z.boolean().default(false),
  xon: z.boolean().default(false),
  xoff: z.boolean().default(false),
});
export type SerialSettings = z.infer<typeof serialSettingsSchema>;

/** What SerialPort asks of a binding (open a port, list ports); MockBinding from @serialport/binding-mock is one. */
export interface SerialBinding {
  list(): Promise<unknown[]>;
  open(options: never): Promise<unknown>;
}

export interface SerialSourceOptions {
  instrument: string;
  path: string;
  settings?: Partial<SerialSettings>;
  /** The serialport binding; the platform's by default. Tests pass MockBinding. */
  binding?: SerialBinding;
  retry?: RetryPolicy;
  log?: Log;
}

/** Reads a serial port; reopens it if it goes away (e.g. a USB adapter unplugged and plugged back in). */
export function openSerialSource(options: SerialSourceOptions): ReconnectingSource<SerialPort> {
  const settings = serialSettingsSchema.parse(options.settings ?? {});
  return new ReconnectingSource<SerialPort>({
    name: options.instrument,
    address: `serial:${options.path}`,
    retry: options.retry,
    log: options.log,
    link: {
      open: () =>
        new Promise((resolve, reject) => {
          // SerialPort spreads its options over the detected binding, so options.binding replaces it.
          const portOptions = { path: options.path, ...settings, autoOpen: false, ...(options.binding ? { binding: options.binding } : {}) };
          const port = new SerialPort(portOptions as SerialPortOpenOptions<AutoDetectTypes>);
          port.open((error) => (error ? reject(error) : resolve(port)));
        }),
      close: (port) =>
        new Promise((resolve) => {
          if (!port.isOpen) return resolve();
          port.close(() => resolve());
        }),
    },
  });
}
