// @serialport/binding-mock ships types, but its package "exports" do not lead to them, so
// moduleResolution "bundler" finds none. The part the bridge tests use, as documented in its dist/index.d.ts.
declare module '@serialport/binding-mock' {
  export interface CreatePortOptions {
    echo?: boolean;
    record?: boolean;
    readyData?: Buffer;
    maxReadSize?: number;
    manufacturer?: string;
    vendorId?: string;
    productId?: string;
  }

  export interface MockPortBinding {
    readonly openOptions: { path: string; baudRate: number; [setting: string]: unknown };
    isOpen: boolean;
    emitData(data: Buffer | string): void;
    close(): Promise<void>;
  }

  export const MockBinding: {
    createPort(path: string, options?: CreatePortOptions): void;
    reset(): void;
    list(): Promise<unknown[]>;
    open(options: never): Promise<MockPortBinding>;
  };
}
