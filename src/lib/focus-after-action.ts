// Where the keyboard focus goes after an action. SvelteKit moves the focus to <body> after every
// successful form action it applies (applyAction → reset_focus) and after every navigation, as a full page
// load would. For a person on a keyboard or a screen reader that means starting again from the top of a
// long page after saving a plan or approving a run. This module puts the focus back where they acted:
//
// - the control that sent the form, when it is still on the page and usable;
// - else the nearest part of the page around it that is still there (its form, section or main), made
//   focusable for the moment (tabindex -1), so reading goes on from there;
// - after a navigation to another page (a redirect, a link), the page's main heading, which a screen
//   reader then reads as the new page's name.
//
// It acts only when the focus has landed on <body>: focus that a page moves on purpose (an error field, a
// dialog) is left alone. Installed once, in the root layout.

const RECENT_MS = 10_000;

interface Acted {
	element: HTMLElement;
	/** Its ancestors at the moment of acting, nearest first: the fallbacks when it is gone. */
	around: HTMLElement[];
	path: string;
	at: number;
}

const usable = (element: HTMLElement | null): element is HTMLElement =>
	Boolean(element?.isConnected) &&
	!(element as HTMLButtonElement).disabled &&
	element!.getClientRects().length > 0 &&
	!element!.closest('[inert]');

/** Focuses an element that may not take the focus by itself, without scrolling the page if in view. */
export function focusQuietly(element: HTMLElement): void {
	if (element.tabIndex < 0 && !element.hasAttribute('tabindex')) element.setAttribute('tabindex', '-1');
	element.focus({ preventScroll: isInView(element) });
}

function isInView(element: HTMLElement): boolean {
	const box = element.getBoundingClientRect();
	return box.bottom > 0 && box.top < window.innerHeight;
}

/** The place the focus should go back to, or null when there is none (focus stays where it is). */
export function returnTarget(acted: Acted | null, here: string, now: number): HTMLElement | null {
	const heading = () => document.querySelector<HTMLElement>('main h1');
	if (!acted || now - acted.at > RECENT_MS) return null;
	if (here !== acted.path) return heading();
	if (usable(acted.element)) return acted.element;
	return acted.around.find((a) => usable(a)) ?? heading();
}

/** Starts watching; returns the function that stops. Call `afterNavigation` from afterNavigate. */
export function keepFocusAfterActions(): { stop: () => void; afterNavigation: () => void } {
	let acted: Acted | null = null;
	let restoring = false;

	const remember = (element: Element | null) => {
		if (!(element instanceof HTMLElement) || element === document.body) return;
		const around: HTMLElement[] = [];
		for (let a = element.parentElement; a && a !== document.body; a = a.parentElement)
			if (a.matches('form, section, [role="region"], fieldset, main')) around.push(a);
		acted = { element, around, path: location.pathname, at: Date.now() };
	};
	const check = () => {
		const active = document.activeElement;
		if (active !== null && active !== document.body) return;
		const target = returnTarget(acted, location.pathname, Date.now());
		if (!target) return;
		restoring = true;
		focusQuietly(target);
		restoring = false;
	};
	const onSubmit = (event: SubmitEvent) =>
		remember((event.submitter as HTMLElement | null) ?? (event.target as HTMLElement));
	const onClick = (event: MouseEvent) => {
		const control = (event.target as Element | null)?.closest('a[href], button, summary');
		if (control) remember(control);
		else acted = null; // a click elsewhere: the person has moved on
	};
	const onKey = (event: KeyboardEvent) => {
		if (event.key === 'Enter' || event.key === ' ') remember(document.activeElement);
	};
	const onFocusIn = (event: FocusEvent) => {
		// SvelteKit's reset focuses <body> (focusin fires); the focus moving anywhere else on its own means
		// the person (or the page, on purpose) chose a place: forget the last action.
		if (event.target === document.body) queueMicrotask(check);
		else if (!restoring && acted && event.target !== acted.element) acted = null;
	};
	// A focused control that is removed or turns disabled leaves the focus on <body> with no event at all:
	// any change to the page is the moment to look (the check is one comparison when nothing is lost).
	const observer = new MutationObserver(() => {
		if (acted && (document.activeElement === document.body || document.activeElement === null)) check();
	});

	document.addEventListener('submit', onSubmit, true);
	document.addEventListener('click', onClick, true);
	document.addEventListener('keydown', onKey, true);
	document.addEventListener('focusin', onFocusIn);
	observer.observe(document.body, {
		childList: true,
		subtree: true,
		attributes: true,
		attributeFilter: ['disabled', 'hidden', 'inert']
	});
	return {
		afterNavigation: () => setTimeout(check, 0),
		stop: () => {
			document.removeEventListener('submit', onSubmit, true);
			document.removeEventListener('click', onClick, true);
			document.removeEventListener('keydown', onKey, true);
			document.removeEventListener('focusin', onFocusIn);
			observer.disconnect();
		}
	};
}
