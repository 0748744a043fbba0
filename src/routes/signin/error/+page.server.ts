import type { PageServerLoad } from './$types';

const explanations: Record<string, { heading: string; text: string; offerNewLink: boolean }> = {
	Verification: {
		heading: 'This sign-in link no longer works',
		text: 'Each link works once and only for a limited time. This one has expired or has already been used. Ask for a new link below.',
		offerNewLink: true
	},
	AccessDenied: {
		heading: 'This account cannot sign in',
		text: 'The account may have been deactivated. Ask your administrator to check it.',
		offerNewLink: false
	},
	Configuration: {
		heading: 'Sign-in is not working right now',
		text: 'Something on our side stopped the sign-in. Please try again in a few minutes; if it keeps happening, tell your administrator.',
		offerNewLink: false
	}
};

export const load: PageServerLoad = ({ url }) => {
	const cause = url.searchParams.get('error') ?? 'Default';
	const explanation = explanations[cause] ?? {
		heading: 'Signing in did not work',
		text: 'Please try again from the sign-in page.',
		offerNewLink: true
	};
	return { title: explanation.heading, ...explanation };
};
