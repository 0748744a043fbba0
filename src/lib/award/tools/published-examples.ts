// Published examples with known optima, as award problems (input JSON, before parsing), for the
// engine's tests. Each names its source.

// Dantzig 1963, Linear Programming and Extensions, sec. 3.3: two canneries ship to three markets;
// supplies 350 and 600 cases, demands 325, 300, 275; distances in thousand miles; freight 90 per case
// per thousand miles; costs in thousands: optimum 153.675 (alternative optima exist, so only the total).
export const dantzig = {
	currency: 'USD',
	items: [
		{ ref: 'new-york', quantity: 325 },
		{ ref: 'chicago', quantity: 300 },
		{ ref: 'topeka', quantity: 275 }
	],
	suppliers: [
		{ ref: 'seattle', capacity: 350 },
		{ ref: 'san-diego', capacity: 600 }
	],
	bids: [
		['seattle', 'new-york', 2.5],
		['seattle', 'chicago', 1.7],
		['seattle', 'topeka', 1.8],
		['san-diego', 'new-york', 2.5],
		['san-diego', 'chicago', 1.8],
		['san-diego', 'topeka', 1.4]
	].map(([supplier, item, distance]) => ({ supplier, item, unitPrice: (90 * (distance as number)) / 1000 }))
};
