import { timingSafeEqual } from 'node:crypto';
import type { FastifyReply, FastifyRequest } from 'fastify';

/**
 * Who may call a route:
 * - `public`: anyone (the dashboard page's own files, which hold no run data);
 * - `status`: read-only views (status, dashboard, run lists); open to anyone when the coordinator's
 *   status is public, otherwise to holders of the join or admin token;
 * - `join`: workers (heartbeats, dataset downloads), with the join token (or the admin token);
 * - `admin`: run control, revocation, genome submission and champion export, with the admin token.
 * Routes say which in `config.access`; a GET route that says nothing is `status`, any other `admin`.
 */
export type Access = 'public' | 'status' | 'join' | 'admin';

export interface AccessTokens {
  joinToken: string;
  adminToken: string;
  /** Whether `status` routes need no token. */
  publicStatus: boolean;
}

const same = (a: string, b: string): boolean => {
  const x = Buffer.from(a);
  const y = Buffer.from(b);
  return x.length === y.length && timingSafeEqual(x, y);
};

/**
 * The token of a request: `Authorization: Bearer …`, or for read-only GETs a `token` query
 * parameter (so a browser can open the dashboard of a coordinator whose status is private).
 */
export function bearerToken(req: FastifyRequest): string | null {
  const header = req.headers.authorization;
  if (header) {
    const m = /^Bearer\s+(\S+)$/i.exec(header);
    return m ? m[1]! : null;
  }
  const query = req.query as { token?: unknown } | undefined;
  return req.method === 'GET' && typeof query?.token === 'string' ? query.token : null;
}

/** True when `token` grants `access`. */
export function grants(tokens: AccessTokens, access: Access, token: string | null): boolean {
  if (access === 'public' || (access === 'status' && tokens.publicStatus)) return true;
  if (!token) return false;
  if (same(token, tokens.adminToken)) return true;
  return access !== 'admin' && same(token, tokens.joinToken);
}

export function routeAccess(req: FastifyRequest): Access {
  const configured = (req.routeOptions.config as { access?: Access } | undefined)?.access;
  return configured ?? (req.method === 'GET' || req.method === 'HEAD' ? 'status' : 'admin');
}

/** Answers 401 for a request whose token does not grant its route's access; calls `onRefused` to log it. */
export function accessHook(tokens: AccessTokens, onRefused: (req: FastifyRequest, access: Access) => void) {
  return async (req: FastifyRequest, reply: FastifyReply): Promise<void> => {
    if (!req.routeOptions.url) return; // unknown route: the not-found handler answers
    const access = routeAccess(req);
    if (grants(tokens, access, bearerToken(req))) return;
    onRefused(req, access);
    await reply.status(401).send({
      error: {
        code: 'NB_UNAUTHORIZED',
        message: `this route needs the ${access === 'admin' ? 'admin' : 'join'} token`,
        fix: access === 'admin' ? 'pass --admin-token (or NETBREEDER_ADMIN_TOKEN)' : 'pass --join-token (or NETBREEDER_JOIN_TOKEN) as configured on the coordinator',
      },
    });
  };
}
