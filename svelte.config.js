import adapter from '@sveltejs/adapter-node';
import { vitePreprocess } from '@sveltejs/vite-plugin-svelte';

/** @type {import('@sveltejs/kit').Config} */
const config = {
	preprocess: vitePreprocess(),
	kit: {
		adapter: adapter({ out: 'build' }),
		// hooks.server.ts checks the origin itself: browsers posting from another site are refused,
		// while instruments and scripts (which send no Origin header) may post multipart uploads.
		csrf: { checkOrigin: false }
	}
};

export default config;
