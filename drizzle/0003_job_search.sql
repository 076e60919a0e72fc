-- Substring search over the job queue (make, model, serial, complaint, customer name) through
-- an FTS5 trigram index, kept in step with jobs and customers by triggers. Rowid = job id.
-- Fields are joined with a newline, which a search box cannot send, so no match spans two.
CREATE VIRTUAL TABLE job_search USING fts5(body, tokenize = 'trigram');
--> statement-breakpoint
CREATE TRIGGER job_search_after_insert AFTER INSERT ON jobs
BEGIN
	INSERT INTO job_search (rowid, body) VALUES (
		new.id,
		new.make || char(10) || new.model || char(10) || coalesce(new.serial, '') || char(10) || new.complaint || char(10) ||
			coalesce((SELECT name FROM customers WHERE id = new.customer_id), '')
	);
END;
--> statement-breakpoint
CREATE TRIGGER job_search_after_update AFTER UPDATE OF make, model, serial, complaint, customer_id ON jobs
BEGIN
	UPDATE job_search SET body =
		new.make || char(10) || new.model || char(10) || coalesce(new.serial, '') || char(10) || new.complaint || char(10) ||
			coalesce((SELECT name FROM customers WHERE id = new.customer_id), '')
	WHERE rowid = new.id;
END;
--> statement-breakpoint
CREATE TRIGGER job_search_after_delete AFTER DELETE ON jobs
BEGIN
	DELETE FROM job_search WHERE rowid = old.id;
END;
--> statement-breakpoint
CREATE TRIGGER job_search_customer_renamed AFTER UPDATE OF name ON customers
BEGIN
	UPDATE job_search SET body = (
		SELECT j.make || char(10) || j.model || char(10) || coalesce(j.serial, '') || char(10) || j.complaint || char(10) || new.name
		FROM jobs j WHERE j.id = job_search.rowid
	)
	WHERE rowid IN (SELECT id FROM jobs WHERE customer_id = new.id);
END;
--> statement-breakpoint
INSERT INTO job_search (rowid, body)
SELECT j.id, j.make || char(10) || j.model || char(10) || coalesce(j.serial, '') || char(10) || j.complaint || char(10) || coalesce(c.name, '')
FROM jobs j LEFT JOIN customers c ON c.id = j.customer_id;
