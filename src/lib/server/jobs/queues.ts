// Queue names, in a leaf module: services that enqueue and the job modules that work import these, never each other.
export const QUEUES = {
	modelBuild: 'model-build',
	mail: 'mail-send'
} as const;
export type QueueName = (typeof QUEUES)[keyof typeof QUEUES];
