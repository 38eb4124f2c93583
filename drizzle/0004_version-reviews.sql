CREATE TABLE "version_reviews" (
	"id" serial PRIMARY KEY NOT NULL,
	"version_id" integer NOT NULL,
	"actor_id" integer,
	"action" varchar(24) NOT NULL,
	"comment" text DEFAULT '' NOT NULL,
	"createdAt" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
ALTER TABLE "model_versions" ADD COLUMN "review" varchar(24);--> statement-breakpoint
ALTER TABLE "version_reviews" ADD CONSTRAINT "version_reviews_version_id_model_versions_id_fk" FOREIGN KEY ("version_id") REFERENCES "public"."model_versions"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "version_reviews" ADD CONSTRAINT "version_reviews_actor_id_users_id_fk" FOREIGN KEY ("actor_id") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
CREATE INDEX "version_reviews_version_idx" ON "version_reviews" USING btree ("version_id");--> statement-breakpoint
CREATE INDEX "model_versions_review_idx" ON "model_versions" USING btree ("review");