// The model-build job: one per version; the handler records success or failure on the version itself.
import { runBuild } from '../services/model-versions';
import type { Job } from './boss';
import { QUEUES } from './queues';

export const modelBuildJob: Job = {
	queue: QUEUES.modelBuild,
	// No retries: a build that failed once fails the same way again; the version shows the reason instead.
	retryLimit: 0,
	handler: async (data) => {
		await runBuild(Number(data.versionId));
	}
};
