import { sveltekit } from '@sveltejs/kit/vite';
import tailwindcss from '@tailwindcss/vite';
import { defineConfig } from 'vitest/config';

export default defineConfig({
	plugins: [tailwindcss(), sveltekit()],
	server: { host: '127.0.0.1' },
	preview: { host: '127.0.0.1' },
	test: {
		projects: [
			{
				extends: true,
				test: {
					name: 'unit',
					// a loaded 2-core CI runner makes the heavier numerical tests take several seconds each
					testTimeout: 30_000,
					environment: 'node',
					include: ['tests/unit/**/*.test.ts']
				}
			},
			{
				extends: true,
				test: {
					name: 'integration',
					environment: 'node',
					include: ['tests/integration/**/*.test.ts'],
					globalSetup: ['tests/support/global-db.ts'],
					setupFiles: ['tests/support/setup-db.ts'],
					fileParallelism: false,
					testTimeout: 60_000,
					hookTimeout: 120_000
				}
			},
			{
				extends: true,
				test: {
					name: 'e2e',
					environment: 'node',
					include: ['tests/e2e/**/*.e2e.ts'],
					globalSetup: ['tests/support/global-app.ts'],
					fileParallelism: false,
					testTimeout: 90_000,
					hookTimeout: 240_000
				}
			}
		]
	}
});
