import { readdir } from 'node:fs/promises';
import { join } from 'node:path';
import { errorMessage } from './log';

export interface PortEntry {
  path: string;
  manufacturer?: string;
  serialNumber?: string;
  vendorId?: string;
  productId?: string;
  pnpId?: string;
}

export interface PortListing {
  ports: PortEntry[];
  /** False when the device details could not be read and only /dev was looked at. */
  detailsAvailable: boolean;
  note?: string;
}

export interface ListPortsOptions {
  /** SerialPort.list by default; on Linux it needs udevadm, which a lab PC may not have. */
  list?: () => Promise<PortEntry[]>;
  devDir?: string;
}

const LIKELY_DEVICES = /^(ttyS\d+|ttyUSB\d+|ttyACM\d+)$/;

export async function listPorts(options: ListPortsOptions = {}): Promise<PortListing> {
  try {
    const list = options.list ?? (await import('serialport')).SerialPort.list;
    const ports = await list();
    return { ports: ports.map(pickDetails), detailsAvailable: true };
  } catch (error) {
    const devDir = options.devDir ?? '/dev';
    const ports = await likelyDevices(devDir);
    return { ports, detailsAvailable: false, note: `port details unavailable (${errorMessage(error)}); listed likely device nodes in ${devDir}` };
  }
}

async function likelyDevices(devDir: string): Promise<PortEntry[]> {
  const names = await readdir(devDir).catch(() => [] as string[]);
  const nodes = names.filter((name) => LIKELY_DEVICES.test(name)).sort(naturalOrder).map((name) => join(devDir, name));
  // Stable names for USB adapters, the ones worth putting in a config.
  const byId = await readdir(join(devDir, 'serial', 'by-id')).catch(() => [] as string[]);
  return [...byId.sort().map((name) => join(devDir, 'serial', 'by-id', name)), ...nodes].map((path) => ({ path }));
}

function naturalOrder(a: string, b: string): number {
  return a.localeCompare(b, 'en', { numeric: true });
}

const DETAILS = ['manufacturer', 'serialNumber', 'vendorId', 'productId', 'pnpId'] as const;

function pickDetails(port: PortEntry): PortEntry {
  const entry: PortEntry = { path: port.path };
  for (const key of DETAILS) if (port[key]) entry[key] = port[key];
  return entry;
}

export function formatListing(listing: PortListing): string {
  const lines = listing.ports.map((port) => {
    const details = [port.manufacturer, port.vendorId && port.productId ? `${port.vendorId}:${port.productId}` : undefined, port.serialNumber && `serial ${port.serialNumber}`]
      .filter(Boolean)
      .join(', ');
    return details ? `${port.path}  (${details})` : port.path;
  });
  if (lines.length === 0) lines.push('no serial ports found');
  if (listing.note) lines.push(`note: ${listing.note}`);
  return `${lines.join('\n')}\n`;
}
