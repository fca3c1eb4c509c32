import type { NextConfig } from 'next';
import pkg from './package.json' with { type: 'json' };

const nextConfig: NextConfig = {
  // PGlite ships WebAssembly and serialport a native binding: load them from node_modules as they are.
  // pdfkit reads its font metrics from its own folder at run time.
  serverExternalPackages: ['@electric-sql/pglite', 'serialport', '@serialport/bindings-cpp', 'pdfkit', 'fontkit', 'mailparser', 'nodemailer'],
  env: { BENCHWIRE_VERSION: pkg.version },
  poweredByHeader: false,
  typedRoutes: false,
};

export default nextConfig;
