import { describe, expect, it } from 'vitest';
import { isDatabaseUnavailable } from './knex';

const pgError = (code: string, message = 'x') => Object.assign(new Error(message), { code });

describe('isDatabaseUnavailable', () => {
	it('knows the errors of a database that is down, dropping connections or starting up', () => {
		for (const error of [
			pgError('ECONNREFUSED', 'connect ECONNREFUSED 127.0.0.1:5432'),
			pgError('57P01', 'terminating connection due to administrator command'),
			pgError('57P03', 'the database system is starting up'),
			pgError('08006'),
			new Error('Connection terminated unexpectedly'),
			Object.assign(new Error('Knex: Timeout acquiring a connection.'), { name: 'KnexTimeoutError' }),
			new AggregateError([pgError('ECONNREFUSED')], ''),
			new Error('wrapped', { cause: pgError('57P01') })
		])
			expect(isDatabaseUnavailable(error), String(error)).toBe(true);
	});

	it('treats answers from the database and other failures as what they are', () => {
		for (const error of [
			pgError('23505', 'duplicate key value violates unique constraint'),
			pgError('42P01', 'relation "nope" does not exist'),
			new Error('Invalid JWT'),
			null,
			'ECONNREFUSED'
		])
			expect(isDatabaseUnavailable(error), String(error)).toBe(false);
	});
});
