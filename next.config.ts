import type { NextConfig } from 'next';
import pkg from './package.json' with { type: 'json' };

const dev = process.env.NODE_ENV !== 'production';

// Content Security Policy (W3C CSP Level 3). Next's hydration uses inline scripts, hence 'unsafe-inline' for
// scripts; everything else comes from our own origin (fonts ship with the app). The live feed is a
// same-origin WebSocket ('self' covers ws:/wss: on the same host in CSP Level 3). frame-ancestors 'none':
// no page may frame the app (clickjacking).
const csp = [
  "default-src 'self'",
  `script-src 'self' 'unsafe-inline'${dev ? " 'unsafe-eval'" : ''}`,
  "style-src 'self' 'unsafe-inline'",
  "img-src 'self' data: blob:",
  "font-src 'self' data:",
  "connect-src 'self' ws: wss:",
  "object-src 'none'",
  "base-uri 'self'",
  "form-action 'self'",
  "frame-ancestors 'none'",
].join('; ');

const securityHeaders = [
  { key: 'Content-Security-Policy', value: csp },
  { key: 'X-Content-Type-Options', value: 'nosniff' },
  // For browsers without frame-ancestors.
  { key: 'X-Frame-Options', value: 'DENY' },
  { key: 'Referrer-Policy', value: 'same-origin' },
  { key: 'Permissions-Policy', value: 'camera=(), microphone=(), geolocation=(), payment=(), usb=(), serial=()' },
  { key: 'Cross-Origin-Opener-Policy', value: 'same-origin' },
];

const nextConfig: NextConfig = {
  // PGlite ships WebAssembly and serialport a native binding: load them from node_modules as they are.
  // pdfkit reads its font metrics from its own folder at run time.
  serverExternalPackages: ['@electric-sql/pglite', 'serialport', '@serialport/bindings-cpp', 'pg', 'pdfkit', 'fontkit', 'mailparser', 'nodemailer', 'rate-limiter-flexible'],
  env: { BENCHWIRE_VERSION: pkg.version },
  poweredByHeader: false,
  typedRoutes: false,
  async headers() {
    return [
      { source: '/:path*', headers: securityHeaders },
      // API answers hold patient data: never stored by a browser or proxy (RFC 9111 §5.2.2.5).
      { source: '/api/:path*', headers: [{ key: 'Cache-Control', value: 'no-store' }] },
      // HSTS only when served over HTTPS (RFC 6797 §7.2: not over plain HTTP); behind a TLS proxy that says so.
      {
        source: '/:path*',
        has: [{ type: 'header', key: 'x-forwarded-proto', value: 'https' }],
        headers: [{ key: 'Strict-Transport-Security', value: 'max-age=31536000; includeSubDomains' }],
      },
    ];
  },
};

export default nextConfig;
