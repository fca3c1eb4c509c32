// Stand-in for the 'server-only' package where code already runs only on the server
// (server.ts, scripts, tests). Next's own build keeps the real guard.
export {};
