-- People become (identity issuer, subject). Existing rows keep a null issuer: no issuer can be known here, and
-- the application binds it at the person's next sign-in only when the provider asserts the same subject.
ALTER TABLE `people` ADD `identity_issuer` text;--> statement-breakpoint
CREATE UNIQUE INDEX `people_identity` ON `people` (`identity_issuer`,`external_id`);