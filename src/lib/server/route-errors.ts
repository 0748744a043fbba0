// How a page's load and actions turn a broken rule (a RuleViolation from a service) into an answer: one
// place for what every route file did with its own catch block.
import { fail, type ActionFailure } from '@sveltejs/kit';
import { setError, type SuperValidated } from 'sveltekit-superforms';
import { httpError } from './http';
import { RuleViolation } from './services/errors';

/** For a load: a RuleViolation becomes the error page with its status (404, 403…) and a logged error id. */
export async function orErrorPage<T>(event: { url: URL }, work: () => Promise<T>): Promise<T> {
	try {
		return await work();
	} catch (error) {
		if (error instanceof RuleViolation) httpError(error.status, error.message, { path: event.url.pathname });
		throw error;
	}
}

/** For an action: a RuleViolation becomes fail(status, …), by default `{ error: message }`. */
export async function orFail<T, F extends Record<string, unknown> = { error: string }>(
	work: () => Promise<T>,
	shape: (violation: RuleViolation) => F = (v) => ({ error: v.message }) as unknown as F
): Promise<T | ActionFailure<F>> {
	try {
		return await work();
	} catch (error) {
		if (error instanceof RuleViolation) return fail(error.status, shape(error));
		throw error;
	}
}

/**
 * For a superform's action: a RuleViolation becomes an error on the field it names (when the form has
 * it), else on `fallback`, answered with the violation's status (or 400 with `status: false`).
 */
export async function orFieldError<T, S extends Record<string, unknown>>(
	form: SuperValidated<S>,
	fields: { known: readonly (keyof S & string)[]; fallback: keyof S & string; status?: boolean },
	work: () => Promise<T>
) {
	try {
		return await work();
	} catch (error) {
		if (!(error instanceof RuleViolation)) throw error;
		const field =
			error.field && (fields.known as readonly string[]).includes(error.field)
				? error.field
				: fields.fallback;
		return setError(
			form,
			field as never,
			error.message,
			fields.status === false ? undefined : { status: error.status }
		);
	}
}
