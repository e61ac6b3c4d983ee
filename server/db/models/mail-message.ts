import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize'

export const MAIL_STATUSES = ['queued', 'sent', 'failed'] as const
export type MailStatus = typeof MAIL_STATUSES[number]

/**
 * One outgoing message. It is written in the same transaction as the change that causes it and sent after
 * the commit; a message the mail server refused stays queued with its error and is retried with backoff,
 * until it is sent or, after the last attempt, marked failed.
 */
export class MailMessage extends Model<InferAttributes<MailMessage>, InferCreationAttributes<MailMessage>> {
  declare id: CreationOptional<number>
  declare organisationId: number | null
  /** The person the message concerns (the invitee, say), so the people table can show its state. */
  declare userId: number | null
  declare kind: string
  declare toAddress: string
  declare subject: string
  declare textBody: string
  declare htmlBody: string | null
  /** Holds a sign-in link: the bodies are blanked once the message has left or has failed for good. */
  declare sensitive: CreationOptional<boolean>
  declare status: CreationOptional<MailStatus>
  declare attempts: CreationOptional<number>
  declare lastError: string | null
  declare nextAttemptAt: Date | null
  declare sentAt: Date | null
  declare createdAt: CreationOptional<Date>
  declare updatedAt: CreationOptional<Date>

  static initModel(sequelize: Sequelize) {
    MailMessage.init({
      id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
      organisationId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
      userId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
      kind: { type: DataTypes.STRING(40), allowNull: false },
      toAddress: { type: DataTypes.STRING(254), allowNull: false },
      subject: { type: DataTypes.STRING(200), allowNull: false },
      textBody: { type: DataTypes.TEXT('medium'), allowNull: false },
      htmlBody: { type: DataTypes.TEXT('medium'), allowNull: true },
      sensitive: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: false },
      status: { type: DataTypes.ENUM(...MAIL_STATUSES), allowNull: false, defaultValue: 'queued' },
      attempts: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, defaultValue: 0 },
      lastError: { type: DataTypes.STRING(500), allowNull: true },
      nextAttemptAt: { type: DataTypes.DATE, allowNull: true },
      sentAt: { type: DataTypes.DATE, allowNull: true },
      createdAt: DataTypes.DATE,
      updatedAt: DataTypes.DATE
    }, { sequelize, tableName: 'mail_messages' })
  }
}
