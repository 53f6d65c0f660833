// Small probes of a running server or process, shared by the browser tests and the benchmarks: a
// free local port, one /api/health request on its own connection, and a process's peak resident
// memory (VmHWM from /proc, Linux).
import { readFileSync } from 'node:fs';
import http from 'node:http';
import net from 'node:net';

/** A port free on 127.0.0.1 at the time of asking. */
export function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const srv = net.createServer();
    srv.unref();
    srv.on('error', reject);
    srv.listen(0, '127.0.0.1', () => {
      const { port } = srv.address() as net.AddressInfo;
      srv.close(() => resolve(port));
    });
  });
}

/** One /api/health request on a new connection (no keep-alive); its status code. */
export function healthOnce(baseUrl: string): Promise<number> {
  return new Promise((resolve, reject) => {
    const req = http.get(`${baseUrl}/api/health`, { agent: false }, (res) => {
      res.resume();
      res.on('end', () => resolve(res.statusCode ?? 0));
    });
    req.on('error', reject);
  });
}

/** Peak resident memory of a process in MB (VmHWM), or null once it has gone. */
export function peakRssMb(pid: number): number | null {
  try {
    const m = /VmHWM:\s+(\d+) kB/.exec(readFileSync(`/proc/${pid}/status`, 'utf8'));
    return m ? Number(m[1]) / 1024 : null;
  } catch {
    return null;
  }
}
