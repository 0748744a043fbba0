import { describe, expect, it } from 'vitest';
import { localFakesRefusal } from './config';

const fakes = {
	MAIL_FAKE_API: 'http://127.0.0.1:8026',
	S3_ACCESS_KEY_ID: 'S3RVER',
	S3_SECRET_ACCESS_KEY: 'S3RVER'
};

describe('the startup refusal of the local fakes', () => {
	it('refuses the fakes in a production build, naming the settings', () => {
		const refusal = localFakesRefusal({ ...fakes, NODE_ENV: 'production', ORIGIN: 'http://127.0.0.1:3000' });
		expect(refusal).toContain('NODE_ENV=production');
		expect(refusal).toContain('MAIL_FAKE_API');
		expect(refusal).toContain('S3_ACCESS_KEY_ID');
	});

	it('refuses the mailbox fake alone in a production build', () => {
		expect(localFakesRefusal({ MAIL_FAKE_API: 'http://127.0.0.1:8026', NODE_ENV: 'production' })).toContain(
			'MAIL_FAKE_API'
		);
	});

	it('refuses the S3 fake key pair behind a public https origin', () => {
		const refusal = localFakesRefusal({
			S3_ACCESS_KEY_ID: 'S3RVER',
			S3_SECRET_ACCESS_KEY: 'S3RVER',
			NODE_ENV: 'development',
			ORIGIN: 'https://tenders.example.test'
		});
		expect(refusal).toContain('loopback');
		expect(refusal).toContain('https://tenders.example.test');
	});

	it('refuses the fakes when no origin is configured', () => {
		expect(localFakesRefusal({ ...fakes, NODE_ENV: 'test' })).toContain('ORIGIN is not set');
	});

	it('refuses a host name that only starts like a loopback address', () => {
		expect(
			localFakesRefusal({ ...fakes, NODE_ENV: 'test', ORIGIN: 'http://127.0.0.1.example.test' })
		).not.toBeNull();
	});

	it('allows the fakes on a loopback origin outside production', () => {
		for (const ORIGIN of ['http://127.0.0.1:3000', 'http://localhost:5173', 'http://[::1]:3000'])
			expect(localFakesRefusal({ ...fakes, NODE_ENV: 'development', ORIGIN })).toBeNull();
	});

	it('allows a production build with a real relay and store', () => {
		expect(
			localFakesRefusal({
				NODE_ENV: 'production',
				ORIGIN: 'https://tenders.example.test',
				S3_ACCESS_KEY_ID: 'AKIAEXAMPLE',
				S3_SECRET_ACCESS_KEY: 'a-real-secret'
			})
		).toBeNull();
	});
});
