import type { Log } from '../log';
import { openFileSource } from './file';
import { openSerialSource, type SerialBinding, type SerialSettings } from './serial';
import type { ByteSource } from './source';
import { openTcpSource, parseTcpAddress } from './tcp';
import { openTcpServerSource } from './tcp-server';

export type SourceSpec =
  | { kind: 'serial'; path: string }
  | { kind: 'tcp'; host: string; port: number }
  /** The analyzer connects to the bridge. */
  | { kind: 'tcp-listen'; host: string; port: number }
  | { kind: 'file'; path: string };

export const SOURCE_FORMS = 'serial:/dev/ttyUSB0 (or serial:COM3), tcp://host:port, tcp-listen://host:port, file:PATH (file:- for stdin)';

/** serial:PATH | tcp://host:port | tcp-listen://host:port | file:PATH → what to open, or an error message. */
export function parseSourceSpec(text: string): SourceSpec | string {
  if (text.startsWith('serial:')) {
    const path = text.slice('serial:'.length);
    return path ? { kind: 'serial', path } : 'serial: needs a device path, e.g. serial:/dev/ttyUSB0';
  }
  if (text.startsWith('tcp-listen:')) {
    const address = parseTcpAddress(text, 'tcp-listen');
    return typeof address === 'string' ? address : { kind: 'tcp-listen', ...address };
  }
  if (text.startsWith('tcp:')) {
    const address = parseTcpAddress(text);
    return typeof address === 'string' ? address : { kind: 'tcp', ...address };
  }
  if (text.startsWith('file:')) {
    const path = text.slice('file:'.length);
    return path ? { kind: 'file', path } : 'file: needs a path, or - for stdin';
  }
  return `unknown source "${text}"; use ${SOURCE_FORMS}`;
}

export function describeSource(spec: SourceSpec): string {
  if (spec.kind === 'tcp' || spec.kind === 'tcp-listen') return `${spec.kind}://${spec.host.includes(':') ? `[${spec.host}]` : spec.host}:${spec.port}`;
  return `${spec.kind}:${spec.path}`;
}

export interface OpenSourceOptions {
  instrument: string;
  serial?: Partial<SerialSettings>;
  binding?: SerialBinding;
  log?: Log;
}

export function openSource(spec: SourceSpec, options: OpenSourceOptions): ByteSource {
  switch (spec.kind) {
    case 'serial':
      return openSerialSource({ instrument: options.instrument, path: spec.path, settings: options.serial, binding: options.binding, log: options.log });
    case 'tcp':
      return openTcpSource({ instrument: options.instrument, host: spec.host, port: spec.port, log: options.log });
    case 'tcp-listen':
      return openTcpServerSource({ instrument: options.instrument, host: spec.host, port: spec.port, log: options.log });
    case 'file':
      return openFileSource(spec.path);
  }
}
