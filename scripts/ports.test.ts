// `npm start`'s port checks against real listening sockets on loopback.
import { afterAll, describe, expect, it } from 'vitest';
import net from 'node:net';
import { checkPorts, tryListen } from './ports.mjs';

const servers: net.Server[] = [];
afterAll(() => servers.forEach((s) => s.close()));

/** A port some other program holds for the length of the test. */
async function occupiedPort(): Promise<number> {
	const server = net.createServer();
	servers.push(server);
	await new Promise<void>((r) => server.listen(0, '127.0.0.1', r));
	return (server.address() as net.AddressInfo).port;
}

/** A port free right now (listened on, then released). */
async function freePort(): Promise<number> {
	const server = net.createServer();
	await new Promise<void>((r) => server.listen(0, '127.0.0.1', r));
	const port = (server.address() as net.AddressInfo).port;
	await new Promise((r) => server.close(r));
	return port;
}

describe('checkPorts', () => {
	it('names the taken port, what wanted it and the variable that moves it, on one line', async () => {
		const taken = await occupiedPort();
		const free = await freePort();
		const problems = await checkPorts([
			{ label: 'app', variable: 'PORT', value: String(free), host: '127.0.0.1' },
			{ label: 'bridge simulator', variable: 'BRIDGE_PORT', value: String(taken), host: '127.0.0.1' }
		]);
		expect(problems).toHaveLength(1);
		expect(problems[0].variable).toBe('BRIDGE_PORT');
		expect(problems[0].line).toMatch(
			new RegExp(
				`^Port ${taken} on 127\\.0\\.0\\.1 \\(bridge simulator\\) is already in use; set BRIDGE_PORT to move it, e\\.g\\. BRIDGE_PORT=\\d+$`
			)
		);
		// The suggested port is really free.
		const suggested = Number(/BRIDGE_PORT=(\d+)$/.exec(problems[0].line)![1]);
		expect(await tryListen(suggested, '127.0.0.1')).toBeNull();
	});

	it('passes when every port is free', async () => {
		const [a, b] = [await freePort(), await freePort()];
		expect(
			await checkPorts([
				{ label: 'app', variable: 'PORT', value: String(a), host: '127.0.0.1' },
				{ label: 'mail catcher list', variable: 'MAIL_UI_PORT', value: String(b), host: '127.0.0.1' }
			])
		).toEqual([]);
	});

	it('refuses a port two services want, and a value that is not a port', async () => {
		const port = await freePort();
		const problems = await checkPorts([
			{ label: 'app', variable: 'PORT', value: String(port), host: '127.0.0.1' },
			{ label: 'mail catcher SMTP', variable: 'SMTP_PORT', value: String(port), host: '127.0.0.1' },
			{ label: 'mail catcher list', variable: 'MAIL_UI_PORT', value: '80x', host: '127.0.0.1' }
		]);
		expect(problems.map((p) => p.variable)).toEqual(['SMTP_PORT', 'MAIL_UI_PORT']);
		expect(problems[0].line).toMatch(
			new RegExp(`^mail catcher SMTP and app both want port ${port}; set SMTP_PORT`)
		);
		expect(problems[1].line).toBe(
			'MAIL_UI_PORT=80x (mail catcher list) is not a port number from 1 to 65535'
		);
	});
});
