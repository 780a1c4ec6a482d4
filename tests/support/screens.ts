// Screenshots of a page at the widths people use: desktop, tablet (both ways) and phone. The file names are printed
// so a closing note can point to them; they land in test-results/screens (or $LOTGATE_E2E_SCREENSHOTS).
import { mkdirSync } from 'node:fs';
import { join, resolve } from 'node:path';
import type { Page } from 'playwright-core';

export const VIEWPORTS = [
	{ name: 'desktop', width: 1440, height: 900 },
	{ name: 'tablet-landscape', width: 1024, height: 768 },
	{ name: 'tablet-portrait', width: 768, height: 1024 },
	{ name: 'phone', width: 390, height: 844 }
] as const;

export const screensDir = () => resolve(process.env.LOTGATE_E2E_SCREENSHOTS || 'test-results/screens');

/** Screenshots at every width; answers the sideways overflow in px at each width (0 = none). */
export async function shoot(page: Page, name: string, options: { fullPage?: boolean } = {}): Promise<Record<string, number>> {
	const dir = screensDir();
	mkdirSync(dir, { recursive: true });
	const before = page.viewportSize();
	const overflow: Record<string, number> = {};
	for (const v of VIEWPORTS) {
		await page.setViewportSize({ width: v.width, height: v.height });
		await page.waitForTimeout(150);
		overflow[v.name] = await page.evaluate(() => Math.max(0, document.documentElement.scrollWidth - document.documentElement.clientWidth));
		const path = join(dir, `${name}-${v.name}.png`);
		await page.screenshot({ path, fullPage: options.fullPage ?? true });
		console.log(`screenshot: ${path}`);
	}
	if (before) await page.setViewportSize(before);
	return overflow;
}
