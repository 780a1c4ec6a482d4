// Band models of our own for the invented demo materials: sums of Gaussian (NIR) or Lorentzian
// (Raman) bands. Positions are loosely where such groups absorb; amplitudes are invented.

export interface Band {
	center: number;
	/** Full width at half maximum, in axis units. */
	fwhm: number;
	height: number;
	shape?: 'gauss' | 'lorentz';
}

const LN16 = 4 * Math.log(2);

/** Adds `scale` × the bands, evaluated at `axis + shift`, into `out`. */
export function addBands(out: Float64Array, axis: Float64Array, bands: readonly Band[], scale = 1, shift = 0, widthScale = 1): void {
	for (const b of bands) {
		const w = b.fwhm * widthScale;
		const h = b.height * scale;
		const c = b.center + shift;
		// Skip points far in the tails: below 1e-9 of the height either shape no longer matters here.
		const reach = b.shape === 'lorentz' ? w * 200 : w * 3.2;
		for (let i = 0; i < axis.length; i++) {
			const d = axis[i] - c;
			if (d > reach || d < -reach) continue;
			const z = (d * d) / (w * w);
			out[i] += b.shape === 'lorentz' ? h / (1 + 4 * z) : h * Math.exp(-LN16 * z);
		}
	}
}

/** NIR components (nm, absorbance as log 1/R). */
export const NIR = {
	/** The lactose sugar skeleton (CH and OH overtones and combinations). */
	lactose: [
		{ center: 1205, fwhm: 40, height: 0.05 },
		{ center: 1480, fwhm: 55, height: 0.09 },
		{ center: 1535, fwhm: 40, height: 0.06 },
		{ center: 1695, fwhm: 38, height: 0.06 },
		{ center: 1780, fwhm: 40, height: 0.04 },
		{ center: 2092, fwhm: 55, height: 0.16 },
		{ center: 2140, fwhm: 35, height: 0.06 },
		{ center: 2270, fwhm: 45, height: 0.14 },
		{ center: 2325, fwhm: 38, height: 0.1 },
		{ center: 2480, fwhm: 60, height: 0.1 }
	],
	/** Water of crystallisation: narrow bands that set the monohydrate apart from anhydrous grades. */
	crystalWater: [
		{ center: 1447, fwhm: 24, height: 0.08 },
		{ center: 1934, fwhm: 32, height: 0.22 }
	],
	/** Adsorbed moisture: broad, and varying from lot to lot. */
	moisture: [
		{ center: 1455, fwhm: 90, height: 0.04 },
		{ center: 1940, fwhm: 100, height: 0.1 }
	],
	starch: [
		{ center: 1200, fwhm: 60, height: 0.05 },
		{ center: 1465, fwhm: 110, height: 0.09 },
		{ center: 1528, fwhm: 60, height: 0.03 },
		{ center: 1928, fwhm: 105, height: 0.15 },
		{ center: 2100, fwhm: 90, height: 0.19 },
		{ center: 2282, fwhm: 70, height: 0.12 },
		{ center: 2320, fwhm: 60, height: 0.11 },
		{ center: 2485, fwhm: 80, height: 0.08 }
	],
	/** Talc: sharp Mg–OH bands and little else. */
	talc: [
		{ center: 1392, fwhm: 12, height: 0.12 },
		{ center: 2080, fwhm: 40, height: 0.02 },
		{ center: 2312, fwhm: 18, height: 0.1 },
		{ center: 2390, fwhm: 22, height: 0.08 }
	],
	/**
	 * A fine, weakly absorbing talc grade (the demo lot's unseen adulterant): the same Mg–OH positions at a tenth of
	 * the height. At 25 % it shows mostly as diluted lactose bands against an unchanged baseline, which the family
	 * model still accepts while every class model rejects it (`unknown`).
	 */
	talcFine: [
		{ center: 1392, fwhm: 12, height: 0.012 },
		{ center: 2080, fwhm: 40, height: 0.002 },
		{ center: 2312, fwhm: 18, height: 0.01 },
		{ center: 2390, fwhm: 22, height: 0.008 }
	],
	cellulose: [
		{ center: 1210, fwhm: 50, height: 0.05 },
		{ center: 1490, fwhm: 80, height: 0.12 },
		{ center: 1590, fwhm: 60, height: 0.05 },
		{ center: 1780, fwhm: 50, height: 0.04 },
		{ center: 1930, fwhm: 70, height: 0.12 },
		{ center: 2100, fwhm: 80, height: 0.16 },
		{ center: 2280, fwhm: 60, height: 0.1 },
		{ center: 2340, fwhm: 50, height: 0.12 },
		{ center: 2480, fwhm: 70, height: 0.09 }
	],
	/** Powdered (less crystalline) cellulose: broader OH, weaker 1590, more water, CH shifted. */
	powderedCellulose: [
		{ center: 1210, fwhm: 52, height: 0.05 },
		{ center: 1488, fwhm: 88, height: 0.12 },
		{ center: 1590, fwhm: 60, height: 0.042 },
		{ center: 1780, fwhm: 50, height: 0.04 },
		{ center: 1931, fwhm: 74, height: 0.13 },
		{ center: 2100, fwhm: 84, height: 0.16 },
		{ center: 2280, fwhm: 60, height: 0.1 },
		{ center: 2338, fwhm: 52, height: 0.118 },
		{ center: 2480, fwhm: 70, height: 0.09 }
	]
} satisfies Record<string, Band[]>;

const L = 'lorentz' as const;

/** Raman components (cm⁻¹ Raman shift, arbitrary intensity units). */
export const RAMAN = {
	citricAnhydrous: [
		{ center: 302, fwhm: 22, height: 0.18, shape: L },
		{ center: 452, fwhm: 16, height: 0.22, shape: L },
		{ center: 598, fwhm: 16, height: 0.2, shape: L },
		{ center: 786, fwhm: 12, height: 0.9, shape: L },
		{ center: 910, fwhm: 12, height: 0.38, shape: L },
		{ center: 945, fwhm: 10, height: 0.5, shape: L },
		{ center: 1052, fwhm: 14, height: 0.33, shape: L },
		{ center: 1198, fwhm: 20, height: 0.2, shape: L },
		{ center: 1402, fwhm: 15, height: 0.3, shape: L },
		{ center: 1440, fwhm: 12, height: 0.45, shape: L },
		{ center: 1692, fwhm: 14, height: 0.36, shape: L },
		{ center: 1742, fwhm: 12, height: 0.3, shape: L }
	],
	/** The monohydrate: carbonyl and C–C bands moved by the different hydrogen bonding. */
	citricMonohydrate: [
		{ center: 302, fwhm: 22, height: 0.18, shape: L },
		{ center: 450, fwhm: 16, height: 0.21, shape: L },
		{ center: 598, fwhm: 16, height: 0.19, shape: L },
		{ center: 784, fwhm: 12, height: 0.89, shape: L },
		{ center: 909, fwhm: 12, height: 0.36, shape: L },
		{ center: 944, fwhm: 10.5, height: 0.5, shape: L },
		{ center: 1054, fwhm: 14, height: 0.32, shape: L },
		{ center: 1198, fwhm: 20, height: 0.2, shape: L },
		{ center: 1403, fwhm: 15, height: 0.3, shape: L },
		{ center: 1438, fwhm: 12, height: 0.44, shape: L },
		{ center: 1697, fwhm: 15, height: 0.38, shape: L },
		{ center: 1746, fwhm: 12, height: 0.25, shape: L }
	]
} satisfies Record<string, Band[]>;
