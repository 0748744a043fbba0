import type { Knex } from 'knex';

// An upload is recorded before its file is stored (services/bids.ts submitUpload): the row is written as
// "receiving" with its object key and committed, then the file is put under that key, then the row is
// marked "accepted" (a revision) or "rejected" (kept with its report), or "refused" (the deadline passed,
// the store failed, or the request died) and its file deleted. So no object is ever stored under a key
// the database does not know, and services/upload-sweep.ts can remove what a dead request left behind:
// rows "receiving" for minutes, and objects whose key has no row or a refused one.
export async function up(knex: Knex): Promise<void> {
	await knex.raw(`
		alter table uploads drop constraint uploads_status_check;
		alter table uploads add constraint uploads_status_check
			check (status in ('receiving', 'accepted', 'rejected', 'refused'));
		create index uploads_by_supplier on uploads (event_id, supplier_organisation_id, received_at desc);
		create index uploads_receiving on uploads (received_at) where status = 'receiving';
	`);
}

export async function down(knex: Knex): Promise<void> {
	await knex.raw(`
		drop index if exists uploads_receiving;
		drop index if exists uploads_by_supplier;
		delete from uploads u where u.status in ('receiving', 'refused')
			and not exists (select 1 from bid_revisions r where r.upload_id = u.id);
		alter table uploads drop constraint uploads_status_check;
		alter table uploads add constraint uploads_status_check check (status in ('accepted', 'rejected'));
	`);
}
