// The model-build queue: one job per version; the handler records success or failure on the version itself.
import { defineQueue } from '../jobs';
import { runBuild } from '../services/model-versions';

export const MODEL_BUILD_QUEUE = 'model-build';

// No retries: a build that failed once fails the same way again; the version shows the reason instead.
defineQueue(
	MODEL_BUILD_QUEUE,
	async (data) => {
		await runBuild(Number(data.versionId));
	},
	{ retryLimit: 0 }
);
