-- Webhook endpoints switched off because they answered 410 Gone. Kept across restarts and shared by every
-- instance of a consumer group until an operator enables the endpoint again (POST /api/webhooks/enable).
CREATE TABLE webhook_disabled (
    url          VARCHAR(592)  NOT NULL PRIMARY KEY,
    disabled_at  TIMESTAMP WITH TIME ZONE NOT NULL,
    reason       VARCHAR(2000) NOT NULL
);
