import { BlockList, isIP } from 'node:net';

// Loopback: 127.0.0.0/8 (RFC 1122 §3.2.1.3) and ::1 (RFC 4291 §2.5.3); BlockList also matches IPv4-mapped
// IPv6 forms such as ::ffff:127.0.0.1.
const loopback = new BlockList();
loopback.addSubnet('127.0.0.0', 8, 'ipv4');
loopback.addAddress('::1', 'ipv6');

/**
 * Whether a bind address (HOST) reaches this machine only. "localhost" counts (RFC 6761 §6.3 reserves it for
 * loopback); any other name might resolve to anything, and 0.0.0.0 or :: listen on every interface.
 */
export function isLoopbackHost(host: string): boolean {
  const name = host.trim().toLowerCase();
  if (name === 'localhost' || name === 'localhost.') return true;
  const family = isIP(name);
  return family !== 0 && loopback.check(name, family === 4 ? 'ipv4' : 'ipv6');
}
