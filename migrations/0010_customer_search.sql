-- Customer search with SQLite's FTS5 full-text index and its trigram tokenizer: any run of three
-- or more characters of a customer's name, phone, email, or any of their cars' descriptions
-- and engines finds them, case-insensitively, through the index instead of a `LIKE '%...%'`
-- scan of every customer and car.
--
-- One row per customer (rowid = customers.id). The phone is indexed as its digits only (spaces,
-- dashes, brackets, dots, plus signs and slashes taken out), and the query's digits are matched
-- against it, so "5550190" and "(555) 0190" both find "555-0190". The cars column holds every
-- car of the customer, "description engine" joined with " | ".
--
-- Kept in step by the triggers below, in the writing transaction. Soft-deleted customers stay
-- indexed (a restore finds them again at once); the search joins `customers` and skips them.
-- Derived data: no audit triggers (the audited rows are customers and cars). An export leaves
-- this virtual table out and an import sets triggers aside, so `status::rebuild_derived` fills it
-- again from the records (`db::search::rebuild`).
--
-- Index plan: the MATCH is answered by the FTS index and ranked by bm25; each hit is joined to
-- customers by primary key, and its cars and active builds are read through `cars_by_customer`
-- and `builds_by_car`.
CREATE VIRTUAL TABLE customer_search USING fts5 (name, phone, email, cars, tokenize = 'trigram');

INSERT INTO customer_search (rowid, name, phone, email, cars)
SELECT c.id, c.name, REPLACE(REPLACE(REPLACE(REPLACE(REPLACE(REPLACE(REPLACE(c.phone, ' ', ''), '-', ''), '(', ''), ')', ''), '.', ''), '+', ''), '/', ''), c.email, COALESCE((SELECT group_concat(k.description || ' ' || k.engine, ' | ') FROM cars k WHERE k.customer_id = c.id), '')
FROM customers c;

CREATE TRIGGER customer_search_customer_create AFTER INSERT ON customers BEGIN
    INSERT INTO customer_search (rowid, name, phone, email, cars)
    VALUES (NEW.id, NEW.name, REPLACE(REPLACE(REPLACE(REPLACE(REPLACE(REPLACE(REPLACE(NEW.phone, ' ', ''), '-', ''), '(', ''), ')', ''), '.', ''), '+', ''), '/', ''), NEW.email, COALESCE((SELECT group_concat(k.description || ' ' || k.engine, ' | ') FROM cars k WHERE k.customer_id = NEW.id), ''));
END;
CREATE TRIGGER customer_search_customer_update AFTER UPDATE OF name, phone, email ON customers BEGIN
    UPDATE customer_search SET name = NEW.name, phone = REPLACE(REPLACE(REPLACE(REPLACE(REPLACE(REPLACE(REPLACE(NEW.phone, ' ', ''), '-', ''), '(', ''), ')', ''), '.', ''), '+', ''), '/', ''), email = NEW.email
    WHERE rowid = NEW.id;
END;
CREATE TRIGGER customer_search_car_create AFTER INSERT ON cars BEGIN
    UPDATE customer_search SET cars = COALESCE((SELECT group_concat(k.description || ' ' || k.engine, ' | ') FROM cars k WHERE k.customer_id = NEW.customer_id), '')
    WHERE rowid = NEW.customer_id;
END;
CREATE TRIGGER customer_search_car_update AFTER UPDATE OF customer_id, description, engine ON cars BEGIN
    UPDATE customer_search SET cars = COALESCE((SELECT group_concat(k.description || ' ' || k.engine, ' | ') FROM cars k WHERE k.customer_id = customer_search.rowid), '')
    WHERE rowid IN (OLD.customer_id, NEW.customer_id);
END;
