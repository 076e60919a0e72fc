// How Benchlight starts Debian's Chromium for tests and the live benchmark: headless, and with
// the background services off, since this machine's network is closed.
export const CHROMIUM_EXECUTABLE = '/usr/bin/chromium';

export const CHROMIUM_ARGS = [
	'--headless',
	'--no-sandbox',
	'--disable-gpu',
	'--disable-quic',
	'--no-first-run',
	'--disable-background-networking',
	'--disable-component-update',
	'--disable-sync'
];
