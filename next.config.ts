import type { NextConfig } from 'next';
import pkg from './package.json' with { type: 'json' };

const nextConfig: NextConfig = {
  // PGlite ships WebAssembly and serialport a native binding: load them from node_modules as they are.
  serverExternalPackages: ['@electric-sql/pglite', 'serialport', '@serialport/bindings-cpp'],
  env: { BENCHWIRE_VERSION: pkg.version },
  poweredByHeader: false,
  typedRoutes: false,
};

export default nextConfig;
