// The sign-in redirect target must never leave the site, whatever a crafted ?next= holds.
import { describe, expect, it } from 'vitest';
import { safeNext } from './safe-next';

describe('safeNext', () => {
	it('keeps same-site paths with their query and hash', () => {
		expect(safeNext('/jobs/12/bench?fft=65536#spectrum')).toBe('/jobs/12/bench?fft=65536#spectrum');
	});
	it.each([
		'//evil.example/x',
		'/\\evil.example',
		'/\t/evil.example',
		'/\n/evil.example',
		'https://evil.example/',
		'javascript:alert(1)',
		'',
		'/login?next=/jobs'
	])('sends %j to the job queue instead', (next) => {
		expect(safeNext(next)).toBe('/jobs');
	});
});
