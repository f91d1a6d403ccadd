import { createServer, type Server } from 'node:net';

/**
 * A listener on the port that closes every connection at once: a service that is down, while its
 * port stays held. A free port in the system's ephemeral range (Linux: 32768–60999) can be taken at
 * any moment as the local port of some outgoing connection, and a service stopped and started again
 * would then find it in use; the default test ports lie below that range, but a REGOLOG_PORT_BASE
 * may not.
 */
export function holdPort(port: number): Promise<Server> {
	return new Promise((resolve, reject) => {
		const s = createServer((socket) => socket.destroy());
		s.once('error', reject);
		s.listen(port, '127.0.0.1', () => resolve(s));
	});
}

export function release(s: Server): Promise<void> {
	return new Promise((resolve) => s.close(() => resolve()));
}
