CREATE TABLE "model_version_parts" (
	"version_id" integer NOT NULL,
	"part_model_id" integer NOT NULL,
	"part_version" integer NOT NULL,
	CONSTRAINT "model_version_parts_version_id_part_model_id_part_version_pk" PRIMARY KEY("version_id","part_model_id","part_version")
);
--> statement-breakpoint
ALTER TABLE "model_version_parts" ADD CONSTRAINT "model_version_parts_version_id_model_versions_id_fk" FOREIGN KEY ("version_id") REFERENCES "public"."model_versions"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "model_version_parts" ADD CONSTRAINT "model_version_parts_part_model_id_models_id_fk" FOREIGN KEY ("part_model_id") REFERENCES "public"."models"("id") ON DELETE no action ON UPDATE no action;--> statement-breakpoint
CREATE INDEX "model_version_parts_part_idx" ON "model_version_parts" USING btree ("part_model_id","part_version");