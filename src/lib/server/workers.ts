// Every module that declares a pg-boss queue is imported here, so the server starts all workers.
import './jobs/model-build';
import './jobs/mail';
export {};
