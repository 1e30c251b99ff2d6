/**
 * Request hygiene for a server meant for the local machine: security headers on every response,
 * a Host allow-list (a page on a foreign name resolved to 127.0.0.1 — DNS rebinding — is refused),
 * and the same-origin rule for websocket upgrades and API posts.
 */
import type { IncomingMessage } from 'node:http';
import type { NextFunction, Request, Response } from 'express';

export const SECURITY_HEADERS: Readonly<Record<string, string>> = Object.freeze({
  'Content-Security-Policy': [
    "default-src 'self'",
    "script-src 'self'",
    "style-src 'self'",
    "img-src 'self' data: blob:",
    "connect-src 'self'",
    "font-src 'self'",
    "object-src 'none'",
    "base-uri 'none'",
    "form-action 'self'",
    "frame-ancestors 'none'",
  ].join('; '),
  'X-Content-Type-Options': 'nosniff',
  'X-Frame-Options': 'DENY',
  'Referrer-Policy': 'no-referrer',
  'Cross-Origin-Opener-Policy': 'same-origin',
  'Cross-Origin-Resource-Policy': 'same-origin',
  'Permissions-Policy': 'camera=(), microphone=(), geolocation=()',
});

const LOOPBACK_NAMES = new Set(['localhost', '127.0.0.1', '[::1]', '::1']);

export function isLoopbackHost(host: string): boolean {
  return LOOPBACK_NAMES.has(host) || /^127\.\d+\.\d+\.\d+$/.test(host);
}

/**
 * Which Host header names are accepted. Bound to a loopback address: loopback names only. Bound
 * to another address (the user asked for it with --host): that address and loopback names; a
 * wildcard bind (0.0.0.0, ::) accepts any name but still enforces same-origin for upgrades.
 */
export function hostChecker(bindHost: string): (hostHeader: string | undefined) => boolean {
  const wildcard = bindHost === '0.0.0.0' || bindHost === '::' || bindHost === '';
  return (hostHeader) => {
    if (!hostHeader) return false;
    const name = hostNameOf(hostHeader);
    if (name === undefined) return false;
    if (wildcard) return true;
    return isLoopbackHost(name) || name === bindHost || name === `[${bindHost}]`;
  };
}

/** The name part of a Host header (`localhost:8080` → `localhost`, `[::1]:80` → `[::1]`). */
export function hostNameOf(hostHeader: string): string | undefined {
  const h = hostHeader.trim().toLowerCase();
  const m = /^(\[[0-9a-f:.]+\]|[a-z0-9.-]+)(?::(\d{1,5}))?$/.exec(h);
  return m ? m[1] : undefined;
}

/**
 * Same-origin check: no Origin header (a non-browser client) passes; otherwise the Origin must be
 * http(s) on exactly the Host the request was sent to.
 */
export function originAllowed(req: Pick<IncomingMessage, 'headers'>): boolean {
  const origin = req.headers.origin;
  if (origin === undefined) return true;
  const host = req.headers.host;
  if (!host) return false;
  let u: URL;
  try {
    u = new URL(origin);
  } catch {
    return false;
  }
  if (u.protocol !== 'http:' && u.protocol !== 'https:') return false;
  return u.host.toLowerCase() === host.trim().toLowerCase();
}

export function securityHeaders(_req: Request, res: Response, next: NextFunction): void {
  for (const [k, v] of Object.entries(SECURITY_HEADERS)) res.setHeader(k, v);
  next();
}

export function hostGuard(check: (h: string | undefined) => boolean) {
  return (req: Request, res: Response, next: NextFunction): void => {
    if (!check(req.headers.host)) {
      res.status(421).type('text/plain').send('misdirected request: this server answers on its own address only\n');
      return;
    }
    next();
  };
}

/** State-changing or compute-heavy requests from a foreign page are refused. */
export function sameOriginGuard(req: Request, res: Response, next: NextFunction): void {
  if (!originAllowed(req)) {
    res.status(403).json({ error: 'cross-origin request refused' });
    return;
  }
  next();
}
