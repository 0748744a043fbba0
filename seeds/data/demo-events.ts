// The three sourcing events of the invented demo scenario (README, "Demo sign-ins"). Every name, item and
// price is made up; prices come from a seeded generator, so every `npm start` shows the same numbers.

import { seededRandom as seeded } from '../../src/lib/award/tools/generate';

export interface DemoItem {
	ref: string;
	description: string;
	lot: string;
	unit: string;
	quantity: number;
	baseline: number;
}

const cases = ['Single-wall case', 'Double-wall case', 'Die-cut tray case', 'Shelf-ready case', 'Mailer box'];
const films = [
	'Machine stretch film',
	'Hand stretch film',
	'Shrink film',
	'Pallet top sheet',
	'Barrier film'
];
const trays = ['PET tray', 'rPET tray', 'Clamshell', 'Lidding film', 'Snap-on lid', 'Portion pot', 'Pot lid'];
const hygiene = [
	'Floor cleaner',
	'Degreaser',
	'Hand soap',
	'Sanitiser spray',
	'Blue roll',
	'Nitrile gloves',
	'Bin liners'
];

/** About 300 items in 4 lots: cases (C62), films (KGM), trays and lids (C62), hygiene (LTR and C62). */
export function packagingItems(): DemoItem[] {
	const random = seeded(2027);
	const items: DemoItem[] = [];
	const add = (
		lot: string,
		prefix: string,
		names: string[],
		count: number,
		unit: (k: number) => string,
		price: [number, number]
	) => {
		for (let k = 1; k <= count; k++) {
			const name = names[(k - 1) % names.length]!;
			const size = `${200 + 10 * (k % 30)} x ${150 + 10 * (k % 20)} x ${100 + 5 * (k % 24)} mm`;
			items.push({
				ref: `${prefix}-${String(k).padStart(3, '0')}`,
				description: lot === 'L1' ? `${name}, ${size}` : `${name}, grade ${1 + (k % 6)}`,
				lot,
				unit: unit(k),
				quantity: Math.round((500 + random() * 9500) / 10) * 10,
				baseline: Math.round((price[0] + random() * (price[1] - price[0])) * 100) / 100
			});
		}
	};
	add('L1', 'CC', cases, 80, () => 'C62', [0.35, 2.4]);
	add('L2', 'SF', films, 60, () => 'KGM', [1.8, 4.2]);
	add('L3', 'TL', trays, 90, () => 'C62', [0.04, 0.6]);
	add('L4', 'HY', hygiene, 70, (k) => (k % 7 < 4 ? 'LTR' : 'C62'), [0.8, 9.5]);
	return items;
}

export interface DemoBid {
	supplier: string;
	capacity: number | null;
	lines: {
		item: string;
		unitPrice: number;
		maxQuantity: number | null;
		breaks: { from: number; unitPrice: number }[];
	}[];
	bundles: { ref: string; price: number; items: { item: string; quantity: number }[] }[];
}

/** Eight offers of different shapes, so that award rules make a difference. */
export function packagingBids(items: DemoItem[]): DemoBid[] {
	const random = seeded(907);
	const price = (item: DemoItem, factor: number, spread = 0.08) =>
		Math.round(item.baseline * (factor + (random() - 0.5) * 2 * spread) * 1000) / 1000;
	const lot = (l: string) => items.filter((i) => i.lot === l);
	const volume = (list: DemoItem[]) => list.reduce((a, i) => a + i.quantity, 0);
	const bid = (
		supplier: string,
		list: DemoItem[],
		factor: number,
		extra: Partial<DemoBid> = {},
		breaks = false
	): DemoBid => ({
		supplier,
		capacity: null,
		bundles: [],
		lines: list.map((item) => {
			const unitPrice = price(item, factor);
			return {
				item: item.ref,
				unitPrice,
				maxQuantity: null,
				breaks:
					breaks && random() < 0.4
						? [
								{
									from: Math.round(item.quantity * 0.5),
									unitPrice: Math.round(unitPrice * 0.96 * 1000) / 1000
								}
							]
						: []
			};
		}),
		...extra
	});
	const trays = lot('L3');
	const bundleItems = [trays[0]!, trays[4]!];
	return [
		bid('Brackwater Board', lot('L1'), 0.95, { capacity: Math.round(volume(lot('L1')) * 0.6) }, true),
		bid('Quillmere Films', lot('L2'), 0.88, { capacity: Math.round(volume(lot('L2')) * 0.5) }),
		bid('Tarnhold Plastics', trays, 0.94, {
			bundles: [
				{
					ref: 'TRAY+LID',
					price: Math.round(bundleItems.reduce((a, i) => a + i.quantity * i.baseline * 0.86, 0)),
					items: bundleItems.map((i) => ({ item: i.ref, quantity: i.quantity }))
				}
			]
		}),
		bid(
			'Osk & Vale Supply',
			items.filter((_, k) => k % 10 < 7),
			1.0
		),
		bid('Linden Reach Hygiene', lot('L4'), 0.93),
		(() => {
			const b = bid(
				'Corrow Packaging',
				items.filter((_, k) => k % 15 === 3),
				0.82
			);
			b.lines = b.lines.map((l) => ({
				...l,
				maxQuantity: Math.round(items.find((i) => i.ref === l.item)!.quantity * 0.5)
			}));
			return b;
		})(),
		bid(
			'Harlow Fen Trading',
			[...lot('L1'), ...trays].filter((_, k) => k % 2 === 0),
			0.97
		),
		bid('Sallow Point Industries', items, 1.05)
	];
}

export const uniformItems = (): DemoItem[] => {
	const random = seeded(41);
	const names = [
		'Hi-vis vest',
		'Work trousers',
		'Safety boots',
		'Fleece jacket',
		'Thermal gloves',
		'Hard hat',
		'Ear defenders',
		'Rain jacket'
	];
	return Array.from({ length: 40 }, (_, k) => ({
		ref: `UP-${String(k + 1).padStart(3, '0')}`,
		description: `${names[k % names.length]}, size ${['S', 'M', 'L', 'XL', 'XXL'][k % 5]}`,
		lot: k < 24 ? 'U1' : 'U2',
		unit: k % 8 === 4 ? 'PR' : 'C62',
		quantity: 20 + Math.round(random() * 180),
		baseline: Math.round((4 + random() * 60) * 100) / 100
	}));
};

/** Event 3, awarded: 24 pallets and strapping items in two lots (pallets, strapping and corner boards). */
export const palletItems = (): DemoItem[] => {
	const random = seeded(73);
	const pallets = ['Wooden pallet 1200 x 800', 'Wooden pallet 1200 x 1000', 'Plastic pallet', 'Half pallet'];
	const strapping = ['PET strapping coil', 'PP strapping coil', 'Strapping seals', 'Corner board'];
	return Array.from({ length: 24 }, (_, k) => {
		const lot = k < 12 ? 'P1' : 'P2';
		const names = lot === 'P1' ? pallets : strapping;
		return {
			ref: `PS-${String(k + 1).padStart(3, '0')}`,
			description: `${names[k % 4]}, ${['North', 'Harbour', 'Uplands'][Math.floor(k / 4) % 3]} depot`,
			lot,
			unit: 'C62',
			quantity: 200 + Math.round(random() * 1800),
			baseline: Math.round((lot === 'P1' ? 6 + random() * 14 : 0.4 + random() * 30) * 100) / 100
		};
	});
};

/** Four offers on Event 3: one supplier cheapest on most pallets, so a share cap per lot costs money. */
export function palletBids(items: DemoItem[]): DemoBid[] {
	const random = seeded(311);
	const bid = (supplier: string, factor: (item: DemoItem) => number, list = items): DemoBid => ({
		supplier,
		capacity: null,
		bundles: [],
		lines: list.map((item) => ({
			item: item.ref,
			unitPrice: Math.round(item.baseline * (factor(item) + (random() - 0.5) * 0.06) * 100) / 100,
			maxQuantity: null,
			breaks: []
		}))
	});
	return [
		bid('Brackwater Board', (i) => (i.lot === 'P1' ? 0.86 : 0.99)),
		bid('Osk & Vale Supply', () => 0.95),
		bid('Sallow Point Industries', () => 1.02),
		bid(
			'Corrow Packaging',
			() => 0.9,
			items.filter((i) => i.lot === 'P2')
		)
	];
}
