// Every table, one file per domain. drizzle-kit reads this file to generate migrations.
export * from './auth';
export * from './campaigns';
export * from './mail';
export * from './audit';
export * from './photometry';
export * from './batches';
export * from './review';
export * from './review-settings';
export * from './catalogue';
export * from './band-library';
