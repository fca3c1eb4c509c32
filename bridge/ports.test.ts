import { mkdir, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { formatListing, listPorts } from './ports';
import { tempDir } from './testing/payloads';

// SerialPort.list() on Linux reads device details through udevadm (serialport docs); without it the
// bridge falls back to the device nodes a serial adapter usually gets (common practice, no source).

let dev: string;
let cleanup: () => Promise<void>;

beforeEach(async () => {
  ({ dir: dev, cleanup } = await tempDir());
  for (const name of ['ttyS0', 'ttyS10', 'ttyS2', 'ttyUSB0', 'ttyACM1', 'tty0', 'null', 'ttyUSBfoo']) await writeFile(join(dev, name), '');
  await mkdir(join(dev, 'serial', 'by-id'), { recursive: true });
  await writeFile(join(dev, 'serial', 'by-id', 'usb-Bench_Adapter_A1-if00-port0'), '');
});

afterEach(() => cleanup());

describe('listPorts', () => {
  it('passes on what SerialPort.list reports', async () => {
    const listing = await listPorts({
      list: async () => [{ path: '/dev/ttyUSB0', manufacturer: 'Bench', vendorId: '0403', productId: '6001', serialNumber: 'A1' }],
      devDir: dev,
    });
    expect(listing).toEqual({
      ports: [{ path: '/dev/ttyUSB0', manufacturer: 'Bench', vendorId: '0403', productId: '6001', serialNumber: 'A1' }],
      detailsAvailable: true,
    });
    expect(formatListing(listing)).toBe('/dev/ttyUSB0  (Bench, 0403:6001, serial A1)\n');
  });

  it('falls back to likely device nodes when listing fails', async () => {
    const listing = await listPorts({
      list: async () => {
        throw new Error('spawn udevadm ENOENT');
      },
      devDir: dev,
    });
    expect(listing.detailsAvailable).toBe(false);
    expect(listing.ports.map((port) => port.path)).toEqual([
      join(dev, 'serial', 'by-id', 'usb-Bench_Adapter_A1-if00-port0'),
      join(dev, 'ttyACM1'),
      join(dev, 'ttyS0'),
      join(dev, 'ttyS2'),
      join(dev, 'ttyS10'),
      join(dev, 'ttyUSB0'),
    ]);
    expect(listing.note).toMatch(/^port details unavailable \(spawn udevadm ENOENT\)/);
    expect(formatListing(listing)).toMatch(/\nnote: port details unavailable/);
  });
});
